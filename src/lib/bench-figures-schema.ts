// The zod schema of BenchFigures (bench-figures.ts): one validation for the WebSocket message,
// the figures endpoint's answer and a snapshot stored in a note. Pure.
import { z } from 'zod';
import type { BenchFigures, ChannelFigures } from './bench-figures.ts';

const num = z.number().finite();
const valueErr = z.object({ value: num, err: num });

const channelFiguresSchema: z.ZodType<ChannelFigures> = z.object({
  channel: z.string().max(100),
  role: z.enum(['out_a', 'out_b', 'herald', 'aux']),
  label: z.string().max(200),
  rateRaw: num,
  rateCorrected: valueErr.nullable(),
  deadTimeLoss: num.nullable(),
  mandelQ: valueErr.nullable(),
  warning: z.string().max(1000).nullable(),
});

export const benchFiguresSchema: z.ZodType<BenchFigures> = z.object({
  benchId: z.string().max(40),
  at: num,
  windowMs: num,
  channels: z.array(channelFiguresSchema).max(64),
  visibility: valueErr
    .extend({ source: z.enum(['sweep', 'envelope']), net: z.boolean(), latestPassMs: num.optional(), newest: valueErr.extend({ endMs: num.optional() }).optional(), passes: z.number().int().positive().optional() })
    .nullable(),
  holding: z.boolean().optional(),
  phase: valueErr.extend({ driftRadPerS: num.nullable(), driftErrRadPerS: num.optional() }).nullable(),
  contrast: num.nullable(),
  g2: valueErr.extend({ accidentals: num }).nullable(),
  coincidenceWindowNs: num.positive().optional(),
  alpha: valueErr.nullable(),
  shotNoise: z.object({ measuredRad: num, limitRad: num, ratio: num, ratioErr: num.optional(), dB: num, binMs: num.optional(), bins: z.number().int().positive().optional(), visibilityLimitRad: num.optional(), darkFreeLimitRad: num.optional() }).nullable(),
});

export type { BenchFigures };
