// Export of a time range typed in the viewer's local time (YYYY-MM-DD HH:MM, 24 h, like every time
// the app shows); the download link carries the range in ms since the epoch, so the server's own
// time zone plays no part.
import { useEffect, useRef, useState } from 'react';
import { formatDateTime, parseLocalInput } from '../lib/client/format.ts';

export default function ExportRange({ exportUrl }: { exportUrl: string }) {
  // The last hour by default, in the reader's zone: filled in once mounted, as the server renders
  // in its own zone (use-hydrated.ts). What was typed into the server's markup before the island
  // hydrated (a slow device) fired no change React saw: it is in the inputs only, and is kept.
  const [from, setFrom] = useState('');
  const [to, setTo] = useState('');
  const fromInput = useRef<HTMLInputElement>(null);
  const toInput = useRef<HTMLInputElement>(null);
  useEffect(() => {
    const now = Date.now();
    setFrom(fromInput.current?.value || formatDateTime(now - 3_600_000, true));
    // To the second: a default cut to the minute left the last seconds out of the file.
    setTo(toInput.current?.value || formatDateTime(now, true));
  }, []);
  const [format, setFormat] = useState<'csv' | 'json'>('csv');
  const [error, setError] = useState<string | null>(null);

  const download = (e: React.FormEvent) => {
    e.preventDefault();
    const f = parseLocalInput(from);
    const t = parseLocalInput(to);
    if (f === null || t === null) return setError('Write both times as YYYY-MM-DD HH:MM (24 h, your local time).');
    if (t <= f) return setError('"To" must come after "From".');
    setError(null);
    window.location.href = `${exportUrl}?${new URLSearchParams({ from: String(f), to: String(t), format })}`;
  };

  return (
    <form onSubmit={download} noValidate>
      <div className="grid items-end gap-3 sm:grid-cols-2 xl:grid-cols-[1fr_1fr_auto_auto]">
        <div>
          <label className="label" htmlFor="exp-from">From (your local time)</label>
          <input className="field figure" id="exp-from" ref={fromInput} value={from} placeholder="YYYY-MM-DD HH:MM" spellCheck={false} aria-invalid={!!error && parseLocalInput(from) === null} onChange={(e) => setFrom(e.target.value)} />
        </div>
        <div>
          <label className="label" htmlFor="exp-to">To</label>
          <input className="field figure" id="exp-to" ref={toInput} value={to} placeholder="YYYY-MM-DD HH:MM" spellCheck={false} aria-invalid={!!error && parseLocalInput(to) === null} onChange={(e) => setTo(e.target.value)} />
        </div>
        <div>
          <label className="label" htmlFor="exp-format">Format</label>
          <select className="field" id="exp-format" value={format} onChange={(e) => setFormat(e.target.value === 'json' ? 'json' : 'csv')}>
            <option value="csv">CSV</option>
            <option value="json">JSON</option>
          </select>
        </div>
        <button className="btn-primary" type="submit">Download</button>
      </div>
      {error && <p className="mt-2 text-sm text-bad" role="alert">{error}</p>}
    </form>
  );
}
