// A note added to a run after it stopped (what the analysis showed, a fault found later): kept in
// the run's record with its own time, after the run's end. Operators only.
import { useState, type FormEvent } from 'react';
import { addNote, errorText } from '../../lib/client/api.ts';

export default function LaterNote(props: { runId: number }) {
  const [text, setText] = useState('');
  const [busy, setBusy] = useState(false);
  const [error, setError] = useState<string | null>(null);
  const submit = async (e: FormEvent) => {
    e.preventDefault();
    setBusy(true);
    setError(null);
    try {
      await addNote(props.runId, { body: text, snapshot: null });
      // The report is rendered on the server: show the note where the others are.
      window.location.reload();
    } catch (err) {
      setError(errorText(err));
      setBusy(false);
    }
  };
  return (
    <form onSubmit={(e) => void submit(e)} className="mt-3 space-y-2 print:hidden">
      <label className="block">
        <span className="label">Add a note to this run</span>
        <textarea className="field min-h-16" required maxLength={10000} value={text} onChange={(e) => setText(e.target.value)} />
      </label>
      <div className="flex items-center gap-2">
        <button type="submit" className="btn" disabled={busy}>Add note</button>
        {error && <span className="text-sm text-bad" role="alert">{error}</span>}
      </div>
    </form>
  );
}
