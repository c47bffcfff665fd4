// Large readouts an operator reads from across the bench: both output rates (raw and corrected),
// V ± σ, phase, contrast and the phase noise against the shot-noise limit.
import type { BenchFigures, ChannelFigures } from '../../lib/bench-figures.ts';
import { formatNumber, formatRate, formatValueErr } from '../../lib/client/format.ts';

function Tile(props: { label: string; value: string; sub?: string | undefined; tone?: string; testId?: string; wide?: boolean }) {
  return (
    <div className={`card !p-3 ${props.wide ? 'sm:col-span-2' : ''}`}>
      <p className="label">{props.label}</p>
      <p className={`figure text-2xl font-medium leading-tight md:text-3xl ${props.tone ?? ''}`} data-testid={props.testId}>{props.value}</p>
      {props.sub && <p className="figure mt-0.5 text-xs text-muted">{props.sub}</p>}
    </div>
  );
}

function rateTile(c: ChannelFigures | undefined, label: string, tone: string, testId: string) {
  const corrected = c?.rateCorrected ? `corrected ${formatRate(c.rateCorrected.value)} ± ${formatRate(c.rateCorrected.err).replace('/s', '')}` : c ? 'no correction (see warning)' : '';
  const loss = c?.deadTimeLoss != null ? ` · dead time ${(c.deadTimeLoss * 100).toFixed(1)}%` : '';
  return <Tile label={label} value={formatRate(c?.rateRaw)} sub={c ? corrected + loss : 'waiting for counts'} tone={tone} testId={testId} />;
}

export function Readouts(props: { figures: BenchFigures | null; loading: boolean; error: string | null }) {
  const f = props.figures;
  const a = f?.channels.find((c) => c.role === 'out_a');
  const b = f?.channels.find((c) => c.role === 'out_b');
  const v = f?.visibility;
  const ph = f?.phase;
  const sn = f?.shotNoise;
  const warnings = f?.channels.filter((c) => c.warning) ?? [];
  return (
    <section aria-label="Live figures" aria-busy={props.loading}>
      {props.error && <p className="mb-2 text-sm text-bad" role="alert">Figures unavailable: {props.error}</p>}
      <div className="grid grid-cols-2 gap-3 sm:grid-cols-3 xl:grid-cols-6">
        {rateTile(a, a?.label ?? 'Output A', 'text-ember', 'rate-a')}
        {rateTile(b, b?.label ?? 'Output B', 'text-tide', 'rate-b')}
        <Tile
          label={v ? `Visibility (${v.source === 'sweep' ? 'fit' : 'envelope'}${v.net ? ', net of darks' : ''})` : 'Visibility'}
          value={v ? formatValueErr(v) : '–'}
          sub={v ? undefined : 'needs a sweep or drift'}
          testId="visibility"
        />
        <Tile
          label="Phase"
          value={ph ? `${formatValueErr(ph)} rad` : '–'}
          sub={ph?.driftRadPerS != null ? `drift ${formatNumber(ph.driftRadPerS * 1000, 2)} mrad/s` : 'at hold only'}
        />
        <Tile label="Contrast (A−B)/(A+B)" value={formatNumber(f?.contrast, 3)} sub="0 at mid-fringe" />
        <Tile
          label="Phase noise / shot noise"
          value={sn ? `${sn.ratio.toFixed(2)}×` : '–'}
          sub={sn ? `${sn.dB >= 0 ? '+' : ''}${sn.dB.toFixed(1)} dB · limit ${(sn.limitRad * 1000).toFixed(2)} mrad` : 'at hold only'}
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

export function PhotonStats(props: { figures: BenchFigures | null; hasCoincidences: boolean }) {
  const f = props.figures;
  return (
    <section className="card" aria-labelledby="stats-h">
      <h2 id="stats-h" className="mb-2 font-semibold">Photon statistics</h2>
      {!f ? (
        <p className="text-sm text-muted">Waiting for figures…</p>
      ) : (
        <dl className="grid grid-cols-[auto_1fr] gap-x-4 gap-y-1.5 text-sm">
          {f.channels.map((c) => (
            <div key={c.channel} className="contents">
              <dt className="text-muted">Mandel Q, {c.label}</dt>
              <dd className="figure text-right">{formatValueErr(c.mandelQ, 4)}</dd>
            </div>
          ))}
          <dt className="text-muted">g²(0), accidentals subtracted</dt>
          <dd className="figure text-right">{f.g2 ? formatValueErr(f.g2, 3) : props.hasCoincidences ? 'waiting' : 'no coincidences'}</dd>
          {f.g2 && (
            <>
              <dt className="text-muted">accidentals</dt>
              <dd className="figure text-right">{f.g2.accidentals.toFixed(1)}</dd>
            </>
          )}
          {f.alpha && (
            <>
              <dt className="text-muted">heralded α</dt>
              <dd className="figure text-right">{formatValueErr(f.alpha, 3)}</dd>
            </>
          )}
        </dl>
      )}
      <p className="mt-2 text-xs text-muted">Q from the counts per bin over the last {f ? (f.windowMs / 1000).toFixed(0) : '–'} s: 0 Poissonian, &lt; 0 sub-Poissonian. g²(0) = 1 coherent, 0 single photon.</p>
    </section>
  );
}
