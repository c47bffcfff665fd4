// Upload of a counts CSV recorded offline: preview first (nothing stored), then import into a new run.
import { useEffect, useRef, useState } from 'react';
import { formatDateTime } from '../lib/client/format.ts';
import { MAX_IMPORT_BYTES, overlapMessage, type ImportOverlap, type ImportPreview as Preview, type ImportResult as Imported } from '../lib/import-shapes.ts';

/** A bin time of the file in the reader's local time, as every other time in the app. */
const when = (ms: number | null) => (ms === null ? '—' : formatDateTime(ms, true));

const DAY_MS = 86_400_000;

/**
 * What keeping the new run means: it is imported to be kept, and a recording older than raw
 * retention would otherwise lose its raw bins (photon statistics, the raw export) at the next pass.
 */
function keptNote(p: Preview): string {
  const kept = 'The new run will be kept from retention\'s trimming, so all of its data stays however old it gets. An operator or admin can release it on the run\'s page like any run';
  const past = p.fromMs !== null && Date.now() - p.fromMs > p.rawRetentionDays * DAY_MS;
  return past
    ? `${kept}; this recording is older than the ${p.rawRetentionDays} days raw bins are kept, so released, its raw bins (its photon statistics and raw export) would be deleted within about 10 minutes.`
    : `${kept}; released, its raw bins go once they are ${p.rawRetentionDays} days old.`;
}

/** Where an upload stands: the share of the file sent, then the server at work on it. */
type Progress = { sent: number } | 'checking' | null;

/**
 * Posts the file and reads the JSON answer. Through XMLHttpRequest, not fetch: only it reports how
 * much of a large upload has gone, and a 50 MiB file takes a while.
 */
function send(url: string, file: File, onProgress: (p: Progress) => void): Promise<{ ok: boolean; status: number; body: unknown }> {
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    xhr.open('POST', url);
    xhr.setRequestHeader('content-type', 'text/csv');
    xhr.setRequestHeader('accept', 'application/json');
    xhr.upload.onprogress = (e) => e.lengthComputable && onProgress({ sent: e.loaded / e.total });
    xhr.upload.onload = () => onProgress('checking');
    xhr.onload = () => {
      let body: unknown = null;
      try {
        body = JSON.parse(xhr.responseText);
      } catch {
        // Not JSON (a proxy's error page): the status says enough.
      }
      resolve({ ok: xhr.status >= 200 && xhr.status < 300, status: xhr.status, body });
    };
    xhr.onerror = () => reject(new Error('the upload failed: network error'));
    xhr.send(file);
  });
}

async function post<T>(url: string, file: File, onProgress: (p: Progress) => void): Promise<T> {
  const res = await send(url, file, onProgress);
  const body = res.body as (T & { error?: string; issues?: Preview['issues']; overlap?: ImportOverlap }) | null;
  if (!res.ok) {
    // A refused overlap is worded here, in local time as the preview shows times; the server's text is in UTC.
    const message = body?.overlap ? overlapMessage(body.overlap, when) : (body?.error ?? `HTTP ${res.status}`);
    throw Object.assign(new Error(message), { issues: body?.issues ?? [] });
  }
  return body as T;
}

export default function ImportUpload({ benchId }: { benchId: string }) {
  const [file, setFile] = useState<File | null>(null);
  const [title, setTitle] = useState('');
  const [preview, setPreview] = useState<Preview | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [issues, setIssues] = useState<Preview['issues']>([]);
  const [done, setDone] = useState<Imported | null>(null);
  const [busy, setBusy] = useState(false);
  const [progress, setProgress] = useState<Progress>(null);
  const base = `/api/v1/benches/${encodeURIComponent(benchId)}/import`;
  const fileInput = useRef<HTMLInputElement>(null);

  const choose = (f: File | null) => {
    setFile(f);
    setPreview(null);
    setDone(null);
    setError(f && f.size > MAX_IMPORT_BYTES ? 'This file is larger than 50 MiB; split it and import the parts.' : null);
  };
  // A file chosen before the island hydrated (a slow device) fired a change React never saw: it
  // is taken up here, or Check file would stay disabled beside the file the reader sees chosen.
  useEffect(() => {
    const f = fileInput.current?.files?.[0];
    if (f) choose(f);
  }, []);

  const run = async <T,>(fn: () => Promise<T>): Promise<T | null> => {
    setBusy(true);
    setError(null);
    setIssues([]);
    try {
      return await fn();
    } catch (err) {
      setError(err instanceof Error ? err.message : 'failed');
      setIssues((err as { issues?: Preview['issues'] }).issues ?? []);
      return null;
    } finally {
      setBusy(false);
      setProgress(null);
    }
  };

  const shownIssues = preview?.issues.length ? preview.issues : issues;
  return (
    <div className="flex flex-col gap-4">
      <form
        className="grid items-end gap-3 sm:grid-cols-2 xl:grid-cols-[2fr_2fr_auto]"
        onSubmit={(e) => {
          e.preventDefault();
          if (!file) return;
          setDone(null);
          void run(() => post<Preview>(`${base}/preview`, file, setProgress)).then((p) => setPreview(p));
        }}
      >
        <div>
          <label className="label" htmlFor="imp-file">
            CSV file (at most 50 MiB)
          </label>
          <input
            id="imp-file"
            className="field"
            type="file"
            accept=".csv,text/csv,text/plain"
            required
            ref={fileInput}
            onChange={(e) => choose(e.target.files?.[0] ?? null)}
          />
        </div>
        <div>
          <label className="label" htmlFor="imp-title">
            Run title
          </label>
          <input id="imp-title" className="field" value={title} onChange={(e) => setTitle(e.target.value)} maxLength={200} placeholder="e.g. Offline calibration, 3 March" />
        </div>
        <button className="btn" type="submit" disabled={!file || busy || file.size > MAX_IMPORT_BYTES}>
          Check file
        </button>
      </form>
      {progress && (
        <p className="figure text-sm text-muted" role="status" data-testid="import-progress">
          {progress === 'checking' ? 'Sent; the server is reading the file…' : `Sending the file: ${Math.round(progress.sent * 100)} %`}
        </p>
      )}

      {error && (
        <p role="alert" className="text-sm text-bad">
          {error}
        </p>
      )}
      {shownIssues.length > 0 && (
        <div role="alert" className="rounded-md border border-bad px-3 py-2 text-sm">
          <p className="mb-1 font-semibold text-bad">Problems found (nothing was stored):</p>
          <ul className="figure list-inside list-disc text-xs">
            {shownIssues.map((i) => (
              <li key={`${i.line}-${i.message}`}>
                line {i.line}: {i.message}
              </li>
            ))}
          </ul>
        </div>
      )}

      {preview && preview.issues.length === 0 && (
        <section aria-label="Preview" className="rounded-md border border-line p-3">
          <p className="text-sm">
            <span className="figure">{preview.rows.toLocaleString('en')}</span> bins of <span className="figure">{preview.dtMs} ms</span>, {when(preview.fromMs)} to {when(preview.toMs)};
            channels {preview.channels.map((c) => c.key).join(', ')}
            {preview.hasX ? ', scan x' : ''}
            {preview.hasCc ? ', coincidences' : ''}.
          </p>
          {preview.overlap && (
            <p role="alert" className="mt-2 rounded-md border border-bad px-3 py-2 text-sm text-bad">
              {overlapMessage(preview.overlap, when)}
            </p>
          )}
          {preview.warnings.map((w) => (
            <p key={w} role="note" className="mt-2 rounded-md border border-warn px-3 py-2 text-sm text-warn">
              {w}
            </p>
          ))}
          <p role="note" className="mt-2 text-sm text-muted" data-testid="import-kept">
            {keptNote(preview)}
          </p>
          <div className="my-2 overflow-x-auto">
            <table className="table figure">
              <thead>
                <tr>
                  <th scope="col">t_ms</th>
                  {preview.channels.map((c) => (
                    <th scope="col" key={c.column}>
                      {c.key}
                    </th>
                  ))}
                  {preview.hasX && <th scope="col">x</th>}
                  {preview.hasCc && <th scope="col">cc</th>}
                </tr>
              </thead>
              <tbody>
                {preview.firstRows.map((r, i) => (
                  <tr key={i}>
                    {r.map((v, j) => (
                      <td key={j}>{v}</td>
                    ))}
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
          <button
            className="btn-primary"
            type="button"
            disabled={busy || !file || !title.trim() || preview.overlap !== null}
            onClick={() => void run(() => post<Imported>(`${base}?title=${encodeURIComponent(title.trim())}`, file!, setProgress)).then((r) => r && (setDone(r), setPreview(null)))}
          >
            {preview.overlap ? 'Cannot import into this bench' : title.trim() ? 'Import as a new run' : 'Give the run a title to import'}
          </button>
        </section>
      )}

      {done && (
        <p role="status" className="rounded-md border border-good px-3 py-2 text-sm text-good">
          Imported <span className="figure">{done.bins.toLocaleString('en')}</span> bins into{' '}
          <a className="font-medium underline" href={`/runs/${done.runId}`} data-testid="imported-run">
            run {done.runId}
          </a>{' '}
          ({when(done.fromMs)} to {when(done.toMs)}){done.keep ? ', kept from retention\'s trimming; release it on the run\'s page' : ''}.
        </p>
      )}
    </div>
  );
}
