// The whole relational model in one file: small enough to read at once, and drizzle-kit generates
// migrations from it. Times are timestamptz except bin times, which stay integer milliseconds
// (bigint, mode number) because the wire contract and every computation speak epoch ms.
import { sql } from 'drizzle-orm';
import {
  bigint,
  boolean,
  customType,
  doublePrecision,
  index,
  integer,
  jsonb,
  pgEnum,
  pgTable,
  primaryKey,
  text,
  timestamp,
  uniqueIndex,
} from 'drizzle-orm/pg-core';

export const roleEnum = pgEnum('role', ['admin', 'operator', 'observer']);
export const channelRoleEnum = pgEnum('channel_role', ['out_a', 'out_b', 'herald', 'aux']);

const createdAt = () => timestamp('created_at', { withTimezone: true }).notNull().defaultNow();

export const users = pgTable('users', {
  id: text('id').primaryKey(),
  email: text('email').notNull().unique(),
  name: text('name').notNull().default(''),
  role: roleEnum('role').notNull(),
  // Null until an invited user sets a password through their one-time link.
  passwordHash: text('password_hash'),
  active: boolean('active').notNull().default(true),
  createdAt: createdAt(),
});

// Lucia's session table; the column names are the adapter's.
export const sessions = pgTable('sessions', {
  id: text('id').primaryKey(),
  userId: text('user_id')
    .notNull()
    .references(() => users.id, { onDelete: 'cascade' }),
  expiresAt: timestamp('expires_at', { withTimezone: true, mode: 'date' }).notNull(),
});

export const apiTokens = pgTable('api_tokens', {
  id: text('id').primaryKey(),
  userId: text('user_id')
    .notNull()
    .references(() => users.id, { onDelete: 'cascade' }),
  label: text('label').notNull(),
  // SHA-256 of the token: tokens are 256-bit random, so a fast hash is enough and lookups stay O(1).
  tokenHash: text('token_hash').notNull().unique(),
  createdAt: createdAt(),
  lastUsedAt: timestamp('last_used_at', { withTimezone: true }),
  revokedAt: timestamp('revoked_at', { withTimezone: true }),
});

// One-time links for invitations and password resets.
export const oneTimeLinks = pgTable('one_time_links', {
  tokenHash: text('token_hash').primaryKey(),
  userId: text('user_id')
    .notNull()
    .references(() => users.id, { onDelete: 'cascade' }),
  purpose: text('purpose', { enum: ['invite', 'reset'] }).notNull(),
  expiresAt: timestamp('expires_at', { withTimezone: true }).notNull(),
  usedAt: timestamp('used_at', { withTimezone: true }),
  createdAt: createdAt(),
});

export const benches = pgTable('benches', {
  id: text('id').primaryKey(),
  name: text('name').notNull(),
  wavelengthNm: doublePrecision('wavelength_nm').notNull(),
  description: text('description').notNull().default(''),
  // Optical path change per unit of mirror travel: 2 for a retro-reflecting mirror moved in one arm.
  pathFactor: doublePrecision('path_factor').notNull().default(2),
  // Admin-set piezo drive limits in volts, enforced by the server before a command is sent.
  driveMin: doublePrecision('drive_min').notNull().default(0),
  driveMax: doublePrecision('drive_max').notNull().default(100),
  // Slowest allowed scan: largest step (V) and shortest dwell (ms) an operator may request.
  driveMaxStep: doublePrecision('drive_max_step').notNull().default(1),
  driveMinDwellMs: integer('drive_min_dwell_ms').notNull().default(1),
  // Coincidence resolving window of the counter, ns: sets the accidental rate R_a·R_b·τ_c for g2(0).
  coincidenceWindowNs: doublePrecision('coincidence_window_ns').notNull().default(2),
  createdAt: createdAt(),
});

export const gateways = pgTable(
  'gateways',
  {
    id: text('id').primaryKey(),
    benchId: text('bench_id')
      .notNull()
      .references(() => benches.id, { onDelete: 'cascade' }),
    tokenHash: text('token_hash'),
    revokedAt: timestamp('revoked_at', { withTimezone: true }),
    createdAt: createdAt(),
    // Last retained status payload, as the gateway sent it.
    status: jsonb('status'),
    lastSeenAt: timestamp('last_seen_at', { withTimezone: true }),
  },
  (t) => [index('gateways_bench_idx').on(t.benchId)],
);

export const channels = pgTable(
  'channels',
  {
    gatewayId: text('gateway_id')
      .notNull()
      .references(() => gateways.id, { onDelete: 'cascade' }),
    key: text('key').notNull(),
    benchId: text('bench_id')
      .notNull()
      .references(() => benches.id, { onDelete: 'cascade' }),
    label: text('label').notNull().default(''),
    role: channelRoleEnum('role'),
    // Corrections: dark rate in counts/s with its 1σ, dead time in ns, relative efficiency.
    darkRate: doublePrecision('dark_rate'),
    darkRateErr: doublePrecision('dark_rate_err'),
    deadTimeNs: doublePrecision('dead_time_ns'),
    deadTimeModel: text('dead_time_model', { enum: ['nonparalyzable', 'paralyzable'] })
      .notNull()
      .default('nonparalyzable'),
    efficiency: doublePrecision('efficiency').notNull().default(1),
    createdAt: createdAt(),
  },
  (t) => [primaryKey({ columns: [t.gatewayId, t.key] }), index('channels_bench_idx').on(t.benchId)],
);

/** Packed count arrays (db/packed-counts.ts), read and written as Buffers. */
const packedCounts = customType<{ data: Buffer; driverData: Buffer }>({ dataType: () => 'bytea' });

// Raw bins: one row per accepted batch, counts packed into bytea (see DEVELOPERS.md for the
// bytes-per-bin and speed measurements behind this choice). `keys[i]` names the i-th slice of
// `counts`, which is channel-major: counts[i*n + j] is channel i, bin j.
export const countBatches = pgTable(
  'count_batches',
  {
    gatewayId: text('gateway_id').notNull(),
    t0: bigint('t0', { mode: 'number' }).notNull(),
    t1: bigint('t1', { mode: 'number' }).notNull(),
    dt: integer('dt').notNull(),
    n: integer('n').notNull(),
    keys: text('keys').array().notNull(),
    counts: packedCounts('counts').notNull(),
    x: doublePrecision('x').array(),
    cc: packedCounts('cc'),
    boot: text('boot').notNull(),
    seq: bigint('seq', { mode: 'number' }).notNull(),
    receivedAt: timestamp('received_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [primaryKey({ columns: [t.gatewayId, t.t0] })],
);

// Rollups: per gateway, channel key and level, one row holds a block of consecutive sums
// (60 one-second sums per minute row, 60 one-minute sums per hour row).
export const rollups = pgTable(
  'rollups',
  {
    gatewayId: text('gateway_id').notNull(),
    key: text('key').notNull(),
    stepMs: integer('step_ms').notNull(),
    blockT0: bigint('block_t0', { mode: 'number' }).notNull(),
    sums: bigint('sums', { mode: 'number' }).array().notNull(),
    // Bins that contributed to each sum, so a partly covered bucket is not mistaken for a dim one.
    bins: integer('bins').array().notNull(),
  },
  (t) => [primaryKey({ columns: [t.gatewayId, t.key, t.stepMs, t.blockT0] })],
);

// The rollup journal: a raw row whose sums are not yet in `rollups`, by its primary key. Ingest
// stores it with the row; a statement of its own adds the sums and deletes it (rollup-journal.ts).
// Readers of rollups add the raw rows still listed here, in the same snapshot.
export const rollupPending = pgTable(
  'rollup_pending',
  {
    gatewayId: text('gateway_id').notNull(),
    t0: bigint('t0', { mode: 'number' }).notNull(),
  },
  (t) => [primaryKey({ columns: [t.gatewayId, t.t0] })],
);

export const sweeps = pgTable(
  'sweeps',
  {
    id: bigint('id', { mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
    benchId: text('bench_id')
      .notNull()
      .references(() => benches.id, { onDelete: 'cascade' }),
    startMs: bigint('start_ms', { mode: 'number' }).notNull(),
    endMs: bigint('end_ms', { mode: 'number' }).notNull(),
    direction: text('direction', { enum: ['up', 'down'] }).notNull(),
    visibility: doublePrecision('visibility').notNull(),
    visibilityErr: doublePrecision('visibility_err').notNull(),
    visibilityNet: doublePrecision('visibility_net'),
    // The net visibility's own 1σ (null when uncalibrated, and on rows stored before it was kept).
    visibilityNetErr: doublePrecision('visibility_net_err'),
    phase: doublePrecision('phase').notNull(),
    phaseErr: doublePrecision('phase_err').notNull(),
    periodX: doublePrecision('period_x').notNull(),
    periodXErr: doublePrecision('period_x_err').notNull(),
    counts: bigint('counts', { mode: 'number' }).notNull(),
    // The full fit result (parameters, covariance, Cash statistic, p-value, per-output visibility).
    fit: jsonb('fit').notNull(),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex('sweeps_bench_span_idx').on(t.benchId, t.startMs, t.direction)],
);

export const runs = pgTable(
  'runs',
  {
    id: bigint('id', { mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
    benchId: text('bench_id')
      .notNull()
      .references(() => benches.id, { onDelete: 'cascade' }),
    title: text('title').notNull(),
    startMs: bigint('start_ms', { mode: 'number' }).notNull(),
    endMs: bigint('end_ms', { mode: 'number' }),
    startedBy: text('started_by').references(() => users.id, { onDelete: 'set null' }),
    // Exempt from retention.
    keep: boolean('keep').notNull().default(false),
    source: text('source', { enum: ['live', 'import'] }).notNull().default('live'),
    createdAt: createdAt(),
  },
  (t) => [
    index('runs_bench_idx').on(t.benchId, t.startMs),
    // One active (unstopped) run per bench, enforced by the database so two operators racing to
    // start a run cannot both succeed.
    uniqueIndex('runs_one_active_idx').on(t.benchId).where(sql`${t.endMs} is null`),
  ],
);

export const notes = pgTable(
  'notes',
  {
    id: bigint('id', { mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
    runId: bigint('run_id', { mode: 'number' })
      .notNull()
      .references(() => runs.id, { onDelete: 'cascade' }),
    authorId: text('author_id').references(() => users.id, { onDelete: 'set null' }),
    atMs: bigint('at_ms', { mode: 'number' }).notNull(),
    body: text('body').notNull(),
    // A snapshot of the live figures when the note was taken, if asked for.
    snapshot: jsonb('snapshot'),
  },
  (t) => [index('notes_run_idx').on(t.runId)],
);

// Gateway health counters, kept in the database so they survive a restart.
export const gatewayHealth = pgTable('gateway_health', {
  gatewayId: text('gateway_id')
    .primaryKey()
    .references(() => gateways.id, { onDelete: 'cascade' }),
  accepted: bigint('accepted', { mode: 'number' }).notNull().default(0),
  duplicates: bigint('duplicates', { mode: 'number' }).notNull().default(0),
  rejected: bigint('rejected', { mode: 'number' }).notNull().default(0),
  refused: bigint('refused', { mode: 'number' }).notNull().default(0),
  seqGaps: bigint('seq_gaps', { mode: 'number' }).notNull().default(0),
  // Most recent rejection reasons, newest first, at most 20: [{ at, reason }].
  lastRejects: jsonb('last_rejects').notNull().default(sql`'[]'::jsonb`),
  lastBoot: text('last_boot'),
  lastSeq: bigint('last_seq', { mode: 'number' }),
  // Arrival time minus the end of the batch's last bin, ms: positive means the data is late.
  clockOffsetMs: doublePrecision('clock_offset_ms'),
});

export type User = typeof users.$inferSelect;
export type Bench = typeof benches.$inferSelect;
export type Gateway = typeof gateways.$inferSelect;
export type Channel = typeof channels.$inferSelect;
export type CountBatchRow = typeof countBatches.$inferSelect;
export type SweepRow = typeof sweeps.$inferSelect;
export type Run = typeof runs.$inferSelect;
export type Note = typeof notes.$inferSelect;

export const alarmMetricEnum = pgEnum('alarm_metric', [
  'rate_high',
  'rate_low',
  'dark_high',
  'visibility_low',
  'phase_drift',
  'gateway_silent',
  'rejected_batches',
]);
export const severityEnum = pgEnum('severity', ['info', 'warning', 'critical']);

export const alarmRules = pgTable(
  'alarm_rules',
  {
    id: bigint('id', { mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
    benchId: text('bench_id')
      .notNull()
      .references(() => benches.id, { onDelete: 'cascade' }),
    name: text('name').notNull(),
    metric: alarmMetricEnum('metric').notNull(),
    // "<gateway>/<key>" for per-channel metrics, null for bench-wide ones.
    channel: text('channel'),
    threshold: doublePrecision('threshold').notNull(),
    // Hysteresis: the alarm clears only past this value.
    clearThreshold: doublePrecision('clear_threshold').notNull(),
    holdSeconds: doublePrecision('hold_seconds').notNull().default(0),
    severity: severityEnum('severity').notNull().default('warning'),
    recipients: text('recipients').array().notNull().default(sql`'{}'::text[]`),
    enabled: boolean('enabled').notNull().default(true),
    createdAt: createdAt(),
    updatedAt: timestamp('updated_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index('alarm_rules_bench_idx').on(t.benchId),
    // A rule's name is what lists, alarms and e-mails call it: two of one bench named alike (in any
    // letter case) could not be told apart there.
    uniqueIndex('alarm_rules_bench_name_idx').on(t.benchId, sql`lower(${t.name})`),
  ],
);

export const alarmEvents = pgTable(
  'alarm_events',
  {
    id: bigint('id', { mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
    // Null once the rule is deleted: the lab's alarm history outlives its rules, so each event keeps
    // the rule's name and metric as they were when it was raised, and no listing needs the rule.
    ruleId: bigint('rule_id', { mode: 'number' }).references(() => alarmRules.id, { onDelete: 'set null' }),
    ruleName: text('rule_name').notNull(),
    metric: alarmMetricEnum('metric').notNull(),
    benchId: text('bench_id')
      .notNull()
      .references(() => benches.id, { onDelete: 'cascade' }),
    severity: severityEnum('severity').notNull(),
    // What the event is about: "<gateway>/<key>" for a channel, a gateway id, or '' bench-wide; one
    // open event per (rule, subject), so the evaluator's state can be restored after a restart.
    subject: text('subject').notNull().default(''),
    message: text('message').notNull(),
    value: doublePrecision('value'),
    raisedAt: timestamp('raised_at', { withTimezone: true }).notNull().defaultNow(),
    clearedAt: timestamp('cleared_at', { withTimezone: true }),
    ackedAt: timestamp('acked_at', { withTimezone: true }),
    ackedBy: text('acked_by').references(() => users.id, { onDelete: 'set null' }),
    ackComment: text('ack_comment'),
  },
  (t) => [index('alarm_events_bench_idx').on(t.benchId, t.raisedAt)],
);

export const auditLog = pgTable(
  'audit_log',
  {
    id: bigint('id', { mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
    at: timestamp('at', { withTimezone: true }).notNull().defaultNow(),
    actorId: text('actor_id').references(() => users.id, { onDelete: 'set null' }),
    entity: text('entity').notNull(),
    entityId: text('entity_id').notNull(),
    action: text('action').notNull(),
    before: jsonb('before'),
    after: jsonb('after'),
  },
  // An ack is matched to its command's entry after a restart (commands/sender.ts): one probe, not a scan of the trail.
  (t) => [index('audit_log_entity_idx').on(t.entity, t.entityId)],
);

// Lab-wide settings as named JSON documents (retention, defaults), validated by zod on read.
export const settings = pgTable('settings', {
  name: text('name').primaryKey(),
  value: jsonb('value').notNull(),
  updatedAt: timestamp('updated_at', { withTimezone: true }).notNull().defaultNow(),
});

// Messages held by the local mail catcher (only when SMTP_URL is unset).
export const caughtMail = pgTable(
  'caught_mail',
  {
    id: bigint('id', { mode: 'number' }).primaryKey().generatedAlwaysAsIdentity(),
    receivedAt: timestamp('received_at', { withTimezone: true }).notNull().defaultNow(),
    from: text('from').notNull(),
    to: text('to').array().notNull(),
    subject: text('subject').notNull(),
    text: text('text').notNull(),
    raw: text('raw').notNull(),
  },
  // Retention walks it from the oldest message: one index range per step, not a scan of the table.
  (t) => [index('caught_mail_received_idx').on(t.receivedAt)],
);

export type AlarmRule = typeof alarmRules.$inferSelect;
export type AlarmEvent = typeof alarmEvents.$inferSelect;
