CREATE TYPE "public"."alarm_metric" AS ENUM('rate_high', 'rate_low', 'dark_high', 'visibility_low', 'phase_drift', 'gateway_silent', 'rejected_batches');--> statement-breakpoint
CREATE TYPE "public"."channel_role" AS ENUM('out_a', 'out_b', 'herald', 'aux');--> statement-breakpoint
CREATE TYPE "public"."role" AS ENUM('admin', 'operator', 'observer');--> statement-breakpoint
CREATE TYPE "public"."severity" AS ENUM('info', 'warning', 'critical');--> statement-breakpoint
CREATE TABLE "alarm_events" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "alarm_events_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"rule_id" bigint NOT NULL,
	"bench_id" text NOT NULL,
	"severity" "severity" NOT NULL,
	"message" text NOT NULL,
	"value" double precision,
	"raised_at" timestamp with time zone DEFAULT now() NOT NULL,
	"cleared_at" timestamp with time zone,
	"acked_at" timestamp with time zone,
	"acked_by" text,
	"ack_comment" text
);
--> statement-breakpoint
CREATE TABLE "alarm_rules" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "alarm_rules_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"bench_id" text NOT NULL,
	"name" text NOT NULL,
	"metric" "alarm_metric" NOT NULL,
	"channel" text,
	"threshold" double precision NOT NULL,
	"clear_threshold" double precision NOT NULL,
	"hold_seconds" double precision DEFAULT 0 NOT NULL,
	"severity" "severity" DEFAULT 'warning' NOT NULL,
	"recipients" text[] DEFAULT '{}'::text[] NOT NULL,
	"enabled" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "api_tokens" (
	"id" text PRIMARY KEY NOT NULL,
	"user_id" text NOT NULL,
	"label" text NOT NULL,
	"token_hash" text NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"last_used_at" timestamp with time zone,
	"revoked_at" timestamp with time zone,
	CONSTRAINT "api_tokens_token_hash_unique" UNIQUE("token_hash")
);
--> statement-breakpoint
CREATE TABLE "audit_log" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "audit_log_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"at" timestamp with time zone DEFAULT now() NOT NULL,
	"actor_id" text,
	"entity" text NOT NULL,
	"entity_id" text NOT NULL,
	"action" text NOT NULL,
	"before" jsonb,
	"after" jsonb
);
--> statement-breakpoint
CREATE TABLE "benches" (
	"id" text PRIMARY KEY NOT NULL,
	"name" text NOT NULL,
	"wavelength_nm" double precision NOT NULL,
	"description" text DEFAULT '' NOT NULL,
	"path_factor" double precision DEFAULT 2 NOT NULL,
	"drive_min" double precision DEFAULT 0 NOT NULL,
	"drive_max" double precision DEFAULT 100 NOT NULL,
	"drive_max_step" double precision DEFAULT 1 NOT NULL,
	"drive_min_dwell_ms" integer DEFAULT 1 NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "caught_mail" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "caught_mail_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"received_at" timestamp with time zone DEFAULT now() NOT NULL,
	"from" text NOT NULL,
	"to" text[] NOT NULL,
	"subject" text NOT NULL,
	"text" text NOT NULL,
	"raw" text NOT NULL
);
--> statement-breakpoint
CREATE TABLE "channels" (
	"gateway_id" text NOT NULL,
	"key" text NOT NULL,
	"bench_id" text NOT NULL,
	"label" text DEFAULT '' NOT NULL,
	"role" "channel_role",
	"dark_rate" double precision,
	"dark_rate_err" double precision,
	"dead_time_ns" double precision,
	"dead_time_model" text DEFAULT 'nonparalyzable' NOT NULL,
	"efficiency" double precision DEFAULT 1 NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "channels_gateway_id_key_pk" PRIMARY KEY("gateway_id","key")
);
--> statement-breakpoint
CREATE TABLE "count_batches" (
	"gateway_id" text NOT NULL,
	"t0" bigint NOT NULL,
	"t1" bigint NOT NULL,
	"dt" integer NOT NULL,
	"n" integer NOT NULL,
	"keys" text[] NOT NULL,
	"counts" integer[] NOT NULL,
	"x" double precision[],
	"cc" integer[],
	"boot" text NOT NULL,
	"seq" bigint NOT NULL,
	"received_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "count_batches_gateway_id_t0_pk" PRIMARY KEY("gateway_id","t0")
);
--> statement-breakpoint
CREATE TABLE "gateway_health" (
	"gateway_id" text PRIMARY KEY NOT NULL,
	"accepted" bigint DEFAULT 0 NOT NULL,
	"duplicates" bigint DEFAULT 0 NOT NULL,
	"rejected" bigint DEFAULT 0 NOT NULL,
	"refused" bigint DEFAULT 0 NOT NULL,
	"seq_gaps" bigint DEFAULT 0 NOT NULL,
	"last_rejects" jsonb DEFAULT '[]'::jsonb NOT NULL,
	"last_boot" text,
	"last_seq" bigint,
	"clock_offset_ms" double precision
);
--> statement-breakpoint
CREATE TABLE "gateways" (
	"id" text PRIMARY KEY NOT NULL,
	"bench_id" text NOT NULL,
	"token_hash" text,
	"revoked_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"status" jsonb,
	"last_seen_at" timestamp with time zone
);
--> statement-breakpoint
CREATE TABLE "notes" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "notes_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"run_id" bigint NOT NULL,
	"author_id" text,
	"at_ms" bigint NOT NULL,
	"body" text NOT NULL,
	"snapshot" jsonb
);
--> statement-breakpoint
CREATE TABLE "one_time_links" (
	"token_hash" text PRIMARY KEY NOT NULL,
	"user_id" text NOT NULL,
	"purpose" text NOT NULL,
	"expires_at" timestamp with time zone NOT NULL,
	"used_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "rollups" (
	"gateway_id" text NOT NULL,
	"key" text NOT NULL,
	"step_ms" integer NOT NULL,
	"block_t0" bigint NOT NULL,
	"sums" bigint[] NOT NULL,
	"bins" integer[] NOT NULL,
	CONSTRAINT "rollups_gateway_id_key_step_ms_block_t0_pk" PRIMARY KEY("gateway_id","key","step_ms","block_t0")
);
--> statement-breakpoint
CREATE TABLE "runs" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "runs_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"bench_id" text NOT NULL,
	"title" text NOT NULL,
	"start_ms" bigint NOT NULL,
	"end_ms" bigint,
	"started_by" text,
	"keep" boolean DEFAULT false NOT NULL,
	"source" text DEFAULT 'live' NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "sessions" (
	"id" text PRIMARY KEY NOT NULL,
	"user_id" text NOT NULL,
	"expires_at" timestamp with time zone NOT NULL
);
--> statement-breakpoint
CREATE TABLE "settings" (
	"name" text PRIMARY KEY NOT NULL,
	"value" jsonb NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "sweeps" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "sweeps_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"bench_id" text NOT NULL,
	"start_ms" bigint NOT NULL,
	"end_ms" bigint NOT NULL,
	"direction" text NOT NULL,
	"visibility" double precision NOT NULL,
	"visibility_err" double precision NOT NULL,
	"visibility_net" double precision,
	"phase" double precision NOT NULL,
	"phase_err" double precision NOT NULL,
	"period_x" double precision NOT NULL,
	"period_x_err" double precision NOT NULL,
	"counts" bigint NOT NULL,
	"fit" jsonb NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "users" (
	"id" text PRIMARY KEY NOT NULL,
	"email" text NOT NULL,
	"name" text DEFAULT '' NOT NULL,
	"role" "role" NOT NULL,
	"password_hash" text,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "users_email_unique" UNIQUE("email")
);
--> statement-breakpoint
ALTER TABLE "alarm_events" ADD CONSTRAINT "alarm_events_rule_id_alarm_rules_id_fk" FOREIGN KEY ("rule_id") REFERENCES "public"."alarm_rules"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alarm_events" ADD CONSTRAINT "alarm_events_bench_id_benches_id_fk" FOREIGN KEY ("bench_id") REFERENCES "public"."benches"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alarm_events" ADD CONSTRAINT "alarm_events_acked_by_users_id_fk" FOREIGN KEY ("acked_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alarm_rules" ADD CONSTRAINT "alarm_rules_bench_id_benches_id_fk" FOREIGN KEY ("bench_id") REFERENCES "public"."benches"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "api_tokens" ADD CONSTRAINT "api_tokens_user_id_users_id_fk" FOREIGN KEY ("user_id") REFERENCES "public"."users"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "audit_log" ADD CONSTRAINT "audit_log_actor_id_users_id_fk" FOREIGN KEY ("actor_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "channels" ADD CONSTRAINT "channels_gateway_id_gateways_id_fk" FOREIGN KEY ("gateway_id") REFERENCES "public"."gateways"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "channels" ADD CONSTRAINT "channels_bench_id_benches_id_fk" FOREIGN KEY ("bench_id") REFERENCES "public"."benches"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "gateway_health" ADD CONSTRAINT "gateway_health_gateway_id_gateways_id_fk" FOREIGN KEY ("gateway_id") REFERENCES "public"."gateways"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "gateways" ADD CONSTRAINT "gateways_bench_id_benches_id_fk" FOREIGN KEY ("bench_id") REFERENCES "public"."benches"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "notes" ADD CONSTRAINT "notes_run_id_runs_id_fk" FOREIGN KEY ("run_id") REFERENCES "public"."runs"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "notes" ADD CONSTRAINT "notes_author_id_users_id_fk" FOREIGN KEY ("author_id") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "one_time_links" ADD CONSTRAINT "one_time_links_user_id_users_id_fk" FOREIGN KEY ("user_id") REFERENCES "public"."users"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "runs" ADD CONSTRAINT "runs_bench_id_benches_id_fk" FOREIGN KEY ("bench_id") REFERENCES "public"."benches"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "runs" ADD CONSTRAINT "runs_started_by_users_id_fk" FOREIGN KEY ("started_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "sessions" ADD CONSTRAINT "sessions_user_id_users_id_fk" FOREIGN KEY ("user_id") REFERENCES "public"."users"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "sweeps" ADD CONSTRAINT "sweeps_bench_id_benches_id_fk" FOREIGN KEY ("bench_id") REFERENCES "public"."benches"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "alarm_events_bench_idx" ON "alarm_events" USING btree ("bench_id","raised_at");--> statement-breakpoint
CREATE INDEX "alarm_rules_bench_idx" ON "alarm_rules" USING btree ("bench_id");--> statement-breakpoint
CREATE INDEX "channels_bench_idx" ON "channels" USING btree ("bench_id");--> statement-breakpoint
CREATE INDEX "gateways_bench_idx" ON "gateways" USING btree ("bench_id");--> statement-breakpoint
CREATE INDEX "notes_run_idx" ON "notes" USING btree ("run_id");--> statement-breakpoint
CREATE INDEX "runs_bench_idx" ON "runs" USING btree ("bench_id","start_ms");--> statement-breakpoint
CREATE UNIQUE INDEX "sweeps_bench_span_idx" ON "sweeps" USING btree ("bench_id","start_ms","direction");