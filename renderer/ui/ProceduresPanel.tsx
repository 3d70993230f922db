import { useRef, useState } from 'react';
import type { StoredProcedure } from '../../shared/ipc/contract.ts';
import { call } from '../api.ts';
import { problemText } from '../problem-text.ts';

/** The procedures new runs use (the newest revision of each), and importing a procedure file the line wrote. */
export function ProceduresPanel({ procedures, onImported }: { procedures: StoredProcedure[]; onImported(): void }) {
  const [message, setMessage] = useState<{ text: string; problem: boolean } | null>(null);
  const importing = useRef(false);
  const [busy, setBusy] = useState(false);

  async function importFile() {
    if (importing.current) return; // one dialog at a time, however often the button is pressed
    importing.current = true;
    setBusy(true);
    setMessage(null);
    try {
      const result = await call('importProcedure', {});
      if (result.outcome === 'cancelled') return;
      setMessage({
        text:
          result.outcome === 'stored'
            ? `Imported ${result.code} revision ${result.revision}: new runs of it use this revision. ${result.summary ?? ''}`
            : `${result.code} revision ${result.revision} is already stored exactly as in the file: nothing changed.`,
        problem: false,
      });
      onImported();
    } catch (error) {
      setMessage({ text: problemText(error, 'The procedure was not imported', 'Choose the file again.'), problem: true });
    } finally {
      importing.current = false;
      setBusy(false);
    }
  }

  return (
    <section className="panel procedures-panel" aria-label="Procedures" data-testid="procedures-panel">
      <h2>Procedures</h2>
      <table className="history">
        <thead>
          <tr>
            <th>Procedure</th>
            <th>Revision</th>
            <th>Model</th>
            <th>Trim</th>
          </tr>
        </thead>
        <tbody>
          {procedures.map(({ id, definition: p }) => (
            <tr key={id}>
              <td>
                {p.code}
                {p.invented && <div className="hint">invented (demo)</div>}
              </td>
              <td>{p.revision}</td>
              <td>{p.model.name}</td>
              <td>
                H{p.trim.harmonicOrder} at {p.trim.stimulusHz} Hz, {p.trim.stimulusLevelDbfs} dBFS; THD ≤ {p.trim.limitThdDb} dB
                {p.requiresCalibration && <div className="hint">needs a calibrated station</div>}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
      <button type="button" onClick={() => void importFile()} disabled={busy} data-testid="import-procedure">
        Import procedure…
      </button>
      <p className={message?.problem ? 'problem' : 'hint'} role={message?.problem ? 'alert' : 'status'} data-testid="import-message" hidden={message === null}>
        {message?.text}
      </p>
    </section>
  );
}
