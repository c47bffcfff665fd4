// The phase-noise tile's words and numbers. The measured noise per bin is compared with two limits
// for the N signal photons of a bin: the shot-noise limit 1/√N (a perfect fringe, V = 1) and the
// floor at the bench's visibility and operating point (the Cramér–Rao bound of the two outputs'
// counts, dark counts included where their rates are set: 1/(V√N) at mid-fringe without darks;
// phaseFloor in analysis/sensitivity.ts). At V = 1 and no darks the floor is the shot-noise limit at
// every operating point, so, in dB, the excess over shot noise is the sum of what the visibility
// costs here, which alignment can gain back, what the dark counts cost, which better detectors or
// cooling can, and the noise above the floor (afterpulses, vibration, laser phase noise, air
// currents). Pure.
import type { BenchFigures } from '../../lib/bench-figures.ts';
import { formatNumber, PLUS_MINUS } from '../../lib/client/format.ts';

type ShotNoise = NonNullable<BenchFigures['shotNoise']>;

export interface PhaseNoiseText {
  value: string;
  unit: string;
  lines: string[];
}

/** Binds a number to its unit where the tile wraps. */
const NBSP = '\u00a0';

/** dB per relative change, for a small error: d(20·log₁₀ x) = (20/ln 10)·dx/x. */
const DB_PER_RELATIVE = 20 / Math.LN10;

/**
 * Decimals that round a value to its uncertainty: the uncertainty to two significant digits when
 * its first three lie in 100–354, else to one (Particle Data Group, Review of Particle Physics,
 * "Introduction": rounding). The spread of a noise read over ~100 bins is some 7 %, so its value
 * keeps two or three digits, not five.
 */
export function decimalsForError(err: number): number {
  if (!(err > 0) || !Number.isFinite(err)) return 2;
  const exp = Math.floor(Math.log10(err));
  const lead = Math.round(err / 10 ** (exp - 2));
  const digits = lead <= 354 ? 2 : lead < 950 ? 1 : 2;
  // 950–999 round up to 1000: one decade more, two digits of it.
  const e = lead >= 950 ? exp + 1 : exp;
  return Math.max(0, digits - 1 - e);
}

/** A signed figure with a true minus sign, and no sign on zero: "+2.2", "−0.3", "0.0". */
function signed(v: number, decimals: number): string {
  const text = formatNumber(v, decimals);
  return Number(text.replace('−', '-')) === 0 ? (0).toFixed(decimals) : v > 0 ? `+${text}` : text;
}

/**
 * `visibility`: the V the phase was read with (the figures' visibility). The last line says how
 * long the noise was read over (`sn.bins`), which sets its ±.
 */
export function phaseNoiseText(sn: ShotNoise, visibility: number): PhaseNoiseText {
  const rel = sn.ratioErr !== undefined && sn.ratio > 0 ? sn.ratioErr / sn.ratio : null;
  const ratioDecimals = rel !== null ? decimalsForError(sn.ratioErr!) : 2;
  const mrad = sn.measuredRad * 1000;
  // Both limits are known far better than the noise: shown to the noise's own last digit.
  const mradDecimals = rel !== null ? decimalsForError(mrad * rel) : 1;
  const perBin = sn.binMs ? ` per${NBSP}${sn.binMs}${NBSP}ms${NBSP}bin` : '';
  const measured = rel !== null ? `${mrad.toFixed(mradDecimals)}${PLUS_MINUS}${(mrad * rel).toFixed(mradDecimals)}` : mrad.toFixed(mradDecimals);
  const lines = [`${measured}${NBSP}mrad${perBin}`];
  const value = sn.ratio.toFixed(ratioDecimals);
  const unit = `${rel !== null ? `±\u00a0${sn.ratioErr!.toFixed(ratioDecimals)} ` : ''}× shot noise`;
  const limit = (sn.limitRad * 1000).toFixed(mradDecimals);
  if (sn.visibilityLimitRad === undefined || !(sn.visibilityLimitRad > 0)) {
    lines.push(`shot-noise limit ${limit}${NBSP}mrad`);
    return { value, unit, lines };
  }
  // Exactly additive: the headline's dB is the visibility's share, the darks' and the rest.
  const darkFree = sn.darkFreeLimitRad !== undefined && sn.darkFreeLimitRad > 0 ? sn.darkFreeLimitRad : sn.visibilityLimitRad;
  const alignmentDb = Math.max(0, 20 * Math.log10(darkFree / sn.limitRad));
  const darksDb = 20 * Math.log10(sn.visibilityLimitRad / darkFree);
  const aboveFloorDb = sn.dB - alignmentDb - darksDb;
  const dbDecimals = rel !== null ? Math.min(2, decimalsForError(DB_PER_RELATIVE * rel)) : 1;
  // Short lines, each number bound to its unit: the tile is a sixth of the page wide (some 20
  // characters) and wraps them. The tile's tooltip says what each limit is.
  lines.push(`shot noise ${limit}${NBSP}mrad`);
  const withDarks = darkFree !== sn.visibilityLimitRad;
  lines.push(`floor ${(sn.visibilityLimitRad * 1000).toFixed(mradDecimals)} at V${NBSP}${visibility.toFixed(2)}${withDarks ? ' with darks' : ''}`);
  lines.push(`alignment can gain ${alignmentDb.toFixed(1)}${NBSP}dB`);
  // Below what one decimal shows (the 633 nm bench's darks) the line would only say "0.0": the floor's "with darks" tells they were counted.
  if (withDarks && darksDb >= 0.05) lines.push(`darks cost ${darksDb.toFixed(1)}${NBSP}dB`);
  lines.push(`noise above floor ${signed(aboveFloorDb, dbDecimals)}${rel !== null ? `${PLUS_MINUS}${(DB_PER_RELATIVE * rel).toFixed(dbDecimals)}` : ''}${NBSP}dB`);
  // How long the reading is: a few seconds read after a move scatter more than the window's ten.
  if (sn.bins !== undefined && sn.binMs) lines.push(`over ${formatNumber((sn.bins * sn.binMs) / 1000, 0)}${NBSP}s, drift taken out`);
  return { value, unit, lines };
}
