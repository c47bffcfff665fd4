// Large readouts an operator reads from across the bench: both output rates (raw and corrected),
// V ± σ (with the latest pass's fit warnings), phase, contrast and the phase noise against the
// shot-noise limit. Figures that no longer stand for the bench (too old, or no gateway online) are
// greyed out and say how old they are.
import { newestPassAt, type BenchFigures, type ChannelFigures } from '../../lib/bench-figures.ts';
import { formatWindow } from '../../lib/coincidence-window.ts';
import { formatDuration, formatNumber, formatRateErr, formatValueErr, PLUS_MINUS, rateParts } from '../../lib/client/format.ts';
import { poissonQThroughDeadTime } from '../../lib/analysis/photon-stats.ts';
import type { FiguresStaleness } from '../../lib/figures-age.ts';
import { warningsLine, type PassWarnings } from '../../lib/pass-warnings.ts';
import { phaseNoiseText } from './phase-noise-text.ts';

/** Stale figures: greyed (colour and contrast both, so it reads from across the room and in either theme). */
const STALE_LOOK = 'opacity-60 grayscale';

/** A number read from across the bench: the value large, its unit and uncertainty smaller beside it, never wrapping. */
function Tile(props: { label: string; title?: string; value: string; unit?: string | undefined; subs?: (string | null)[]; tone?: string; testId?: string; warning?: { short: string; full: string } | null }) {
  return (
    <div className="card min-w-0 !p-3" title={props.title}>
      <p className="label truncate" title={props.label}>{props.label}</p>
      {/* Value and unit each stay whole; a long unit moves under the value on a narrow tile instead of running off it. */}
      <p className="figure flex flex-wrap items-baseline gap-x-1 leading-tight" data-testid={props.testId}>
        <span className={`whitespace-nowrap text-2xl font-medium md:text-3xl ${props.tone ?? ''}`}>{props.value}</span>
        {props.unit && <span className="whitespace-nowrap text-sm text-muted">{props.unit}</span>}
      </p>
      {/* Secondary lines wrap rather than lose their ends ("per 10 ms bin", "(drift)"). */}
      {props.subs?.map((s, i) => s && <p key={i} className="figure mt-0.5 text-xs text-muted [overflow-wrap:anywhere]">{s}</p>)}
      {props.warning && <p className="mt-0.5 truncate text-xs text-warn" title={props.warning.full} data-testid={props.testId && `${props.testId}-warning`}>{props.warning.short}</p>}
    </div>
  );
}

function rateTile(c: ChannelFigures | undefined, label: string, tone: string, testId: string, corrections: Set<string>) {
  const r = rateParts(c?.rateRaw);
  // The corrected rate on the raw rate's scale, so the unit above serves both. With no dark rate
  // or dead time set it would only repeat the raw rate: say so instead (short: the tile truncates).
  const corrected = !c
    ? 'waiting for counts'
    : !corrections.has(c.channel)
      ? 'no corrections set'
      : c.rateCorrected
        ? `corr. ${formatRateErr(c.rateCorrected, c.rateRaw)}`
        : 'uncorrected (see warning)';
  const loss = c?.deadTimeLoss != null ? `dead-time loss ${(c.deadTimeLoss * 100).toFixed(1)} %` : null;
  return <Tile label={label} value={r.value} unit={r.unit} subs={[corrected, loss]} tone={tone} testId={testId} />;
}

/** Value and uncertainty rounded together, split for a tile. */
function splitErr(v: { value: number; err: number }, decimals?: number): { value: string; err: string } {
  const [value = '–', err = ''] = formatValueErr(v, decimals).split(PLUS_MINUS);
  return { value, err };
}

/** What the page says of figures that no longer stand for the bench: why, and how old they are. */
function StaleNotice(props: { stale: FiguresStaleness | null; offline: boolean }) {
  const age = props.stale ? formatDuration(props.stale.ageMs) : null;
  if (props.offline) {
    return (
      <p className="mb-2 text-sm text-warn" role="status" data-testid="figures-stale">
        No gateway of this bench is online: the figures below stop at its last batch{age ? ` and are ${age} old` : ''}.
      </p>
    );
  }
  if (!age) return null;
  return (
    <p className="mb-2 text-sm text-warn" role="status" data-testid="figures-stale">
      Figures are {age} old: no newer counts have arrived.
    </p>
  );
}

/**
 * The visibility tile's lines. It leads with the newest pass rather than the running mean: an
 * operator aligning wants the effect of the last touch, which one pass shows as soon as it is
 * fitted, while the mean of the last few passes (up to 4 in 30 min, `runningVisibility`) still
 * holds passes from before the touch and follows it only pass by pass. The mean, steadier, stays
 * beside it, named with the number of passes it combines; the alarm judges each pass too.
 */
function visibilityLines(f: BenchFigures, now: number, noFringe: boolean): { value: string; subs: (string | null)[] } {
  const v = f.visibility!;
  const main = splitErrTile(v.newest ?? v, noFringe);
  if (v.source === 'envelope') return { value: main.value, subs: [main.sub, 'fringe envelope (drift)'] };
  const passTime = newestPassAt(v);
  const age = passTime !== undefined ? formatDuration(now - passTime) : null;
  if (!v.newest) return { value: main.value, subs: [main.sub, age ? `mean of recent passes, newest ${age} ago` : 'mean of recent passes'] };
  return {
    value: main.value,
    subs: [main.sub, `newest pass, ${age} ago`, v.passes && v.passes > 1 ? `mean of ${v.passes} passes ${formatValueErr(v)}` : null],
  };
}

/** A V ± σ for a tile: the value, and its ± line unless the pass measured no fringe. */
function splitErrTile(v: { value: number; err: number }, noFringe: boolean): { value: string; sub: string | null } {
  const s = splitErr(v);
  return { value: s.value, sub: noFringe ? null : `± ${s.err}` };
}

/**
 * `corrections`: ids ("gateway/key") of the channels with a dark rate or a dead time set.
 * `latestPass`: the warnings of the newest fitted pass, or null before one.
 * `stale`: why and how the figures are stale, null while current (or before there are any).
 * `offline`: every gateway of the bench is offline. `now`: the reader's clock for ages (null before mount).
 */
export function Readouts(props: {
  figures: BenchFigures | null;
  loading: boolean;
  error: string | null;
  corrections: Set<string>;
  latestPass: PassWarnings | null;
  stale: FiguresStaleness | null;
  offline: boolean;
  now: number | null;
}) {
  const f = props.figures;
  const a = f?.channels.find((c) => c.role === 'out_a');
  const b = f?.channels.find((c) => c.role === 'out_b');
  const v = f?.visibility;
  // The tile leads with the newest pass: its warnings qualify it. Without a significant fringe in
  // that pass the value is no confident V ± σ, so it is muted and its ± dropped.
  const passWarning = v?.source === 'sweep' && props.latestPass && props.latestPass.all.length > 0 ? props.latestPass : null;
  const vis = f && v ? visibilityLines(f, props.now ?? f.at, !!passWarning?.noFringe) : null;
  // Why a held drive gives no phase: the reading needs the fringe's V, and loses its sensitivity at
  // the fringe's top and bottom (the phase noise is read near mid-fringe only).
  const phaseMissing = !f?.holding ? 'while holding only' : !v || v.value <= 0.05 ? 'needs V: sweep first' : 'hold nearer mid-fringe';
  const ph = f?.phase;
  const phs = ph ? splitErr(ph) : null;
  const sn = f?.shotNoise;
  const noise = sn && v ? phaseNoiseText(sn, v.value) : null;
  const warnings = f?.channels.filter((c) => c.warning) ?? [];
  return (
    <section aria-label="Live figures" aria-busy={props.loading}>
      {props.error && <p className="mb-2 text-sm text-bad" role="alert">Figures unavailable: {props.error}</p>}
      <StaleNotice stale={props.stale} offline={props.offline} />
      <div className={`grid grid-cols-2 gap-3 sm:grid-cols-3 xl:grid-cols-6 ${props.stale ? STALE_LOOK : ''}`} data-stale={props.stale ? 'true' : undefined}>
        {rateTile(a, a?.label ?? 'Output A', 'text-ember', 'rate-a', props.corrections)}
        {rateTile(b, b?.label ?? 'Output B', 'text-tide', 'rate-b', props.corrections)}
        {/* "net of darks" under the value, not in the label, which a six-tile row truncates to "net of dar…". */}
        <Tile
          label="Visibility"
          value={vis?.value ?? '–'}
          subs={vis ? [vis.subs[0] ?? null, v?.net ? 'net of darks' : null, ...vis.subs.slice(1)] : ['needs a sweep, or a drift over a whole fringe']}
          tone={passWarning?.noFringe ? 'text-muted' : ''}
          warning={passWarning && { short: `last pass: ${passWarning.noFringe ? 'no fringe' : warningsLine(passWarning)}`, full: passWarning.all.join('\n') }}
          testId="visibility"
        />
        <Tile
          label="Phase"
          value={phs?.value ?? '–'}
          unit={ph ? 'rad' : undefined}
          subs={[
            phs ? `± ${phs.err} rad` : null,
            ph?.driftRadPerS != null
              ? `drift ${ph.driftErrRadPerS !== undefined ? formatValueErr({ value: ph.driftRadPerS * 1000, err: ph.driftErrRadPerS * 1000 }) : formatNumber(ph.driftRadPerS * 1000, 2)} mrad/s`
              : ph
                ? 'drift after a few seconds held'
                : phaseMissing,
          ]}
        />
        <Tile label="Contrast (A−B)/(A+B)" value={formatNumber(f?.contrast, 3)} subs={['0 at mid-fringe']} />
        <Tile
          label="Phase noise"
          title="Phase noise per bin over the seconds the drive has held near mid-fringe (up to the last 10 s), each second taken about its own straight line: the steady drift is the phase tile's, not noise. ± is 1σ from the number of bins: readings 10 s apart, which share no bins, scatter by about that (one second of 10 ms bins alone by ±7%). Shot noise: 1/√N for the N signal photons of a bin, a perfect fringe's limit. Floor: the least phase noise these counts allow at this visibility and operating point, 1/(V√N) at mid-fringe, with the outputs' dark counts counted as noise where their dark rates are set. Alignment can close the gap the visibility leaves, quieter detectors the darks' share; noise above the floor comes from the detectors (afterpulses) and the bench (vibration, laser phase noise, air)."
          value={noise?.value ?? '–'}
          unit={noise?.unit}
          subs={noise?.lines ?? [phaseMissing]}
          testId="phase-noise"
        />
      </div>
      {warnings.length > 0 && (
        <ul className="mt-2 space-y-1 text-sm text-warn" aria-label="Channel warnings">
          {warnings.map((c) => (
            <li key={c.channel}>{c.label}: {c.warning}</li>
          ))}
        </ul>
      )}
    </section>
  );
}

export function PhotonStats(props: { figures: BenchFigures | null; hasCoincidences: boolean; stale: FiguresStaleness | null }) {
  const f = props.figures;
  const stale = f ? props.stale : null;
  return (
    <section className="card" aria-labelledby="stats-h">
      <h2 id="stats-h" className="mb-2 font-semibold">
        Photon statistics
        {stale && <span className="ml-2 text-xs font-normal text-warn">{formatDuration(stale.ageMs)} old{stale.offline ? ', gateway offline' : ''}</span>}
      </h2>
      {!f ? (
        <p className="text-sm text-muted">Waiting for figures…</p>
      ) : (
        <dl className={`grid grid-cols-[1fr_auto] gap-x-4 gap-y-1.5 text-sm [&>dd]:whitespace-nowrap ${stale ? STALE_LOOK : ''}`}>
          {f.channels.map((c) => (
            <div key={c.channel} className="contents">
              <dt className="text-muted">
                Mandel Q, {c.label}
                {/* Dead time thins the counts regularly: laser light itself reads below 0 here. */}
                {c.mandelQ && c.deadTimeLoss != null && c.deadTimeLoss >= 0.005 && c.deadTimeLoss < 1 && (
                  <span className="figure block text-xs">laser light reads {formatNumber(poissonQThroughDeadTime(c.deadTimeLoss), 3)} (dead time)</span>
                )}
              </dt>
              <dd className="figure text-right">{formatValueErr(c.mandelQ)}</dd>
            </div>
          ))}
          {/* A heralded bench is judged by α: its g²(0) without the herald only says "waiting". */}
          {(f.g2 || !f.alpha) && (
            <>
              <dt className="text-muted">
                g²(0), coincidences over accidentals
                {/* The accidentals scale with the window: say which one this value assumed. */}
                {f.coincidenceWindowNs !== undefined && <span className="figure block text-xs" data-testid="coincidence-window">{formatWindow(f.coincidenceWindowNs)}</span>}
              </dt>
              {/* An uncertainty of 1 or more cannot tell a single-photon source (g² ≈ 0) from a classical one (g² ≥ 1): too few counts to say anything yet. */}
              <dd className="figure text-right" title={f.g2 ? formatValueErr(f.g2) : undefined}>
                {f.g2 ? (f.g2.err >= 1 ? 'too few coincidences' : formatValueErr(f.g2)) : props.hasCoincidences ? 'waiting' : 'no coincidences'}
              </dd>
            </>
          )}
          {f.g2 && (
            <>
              <dt className="text-muted">accidentals in {Math.round(f.windowMs / 1000)} s</dt>
              <dd className="figure text-right">{f.g2.accidentals.toFixed(1)}</dd>
            </>
          )}
          {f.alpha && (
            <>
              <dt className="text-muted">heralded α</dt>
              <dd className="figure text-right" data-testid="alpha">{formatValueErr(f.alpha)}</dd>
              <dd className="col-span-2 -mt-1 !whitespace-normal text-xs text-muted">α = 0 an ideal single photon, 1 classical light; between them, multi-photon emission or background.</dd>
            </>
          )}
        </dl>
      )}
      <p className="mt-2 text-xs text-muted">Q from how the counts change from one bin to the next over the last {f ? (f.windowMs / 1000).toFixed(0) : '–'} s, so a slowly drifting fringe does not read as bunching. Poissonian light reads 0, or with dead time the value given under the channel's name; only a Q below that means sub-Poissonian light.{f?.alpha ? '' : ' g²(0) = 1 coherent, 0 single photon.'} While the drive sweeps, these figures measure the fringes, not the light.</p>
    </section>
  );
}
