import { useCallback, useEffect, useRef, useState, type KeyboardEvent } from 'react';
import type { ProcedureRevision } from '../../shared/ipc/contract.ts';
import { stepConditions, stepDetails, stepLimits } from '../../shared/procedures/step-text.ts';
import { call } from '../api.ts';
import { problemText } from '../problem-text.ts';

/**
 * Each model's procedures with every stored revision, the chosen revision's steps with their
 * parameters and limits, and importing a procedure file the line wrote. Arrow keys move between
 * revisions; Enter or Space shows one.
 */
export function ProceduresPanel({ onImported }: { onImported(): void }) {
  const [revisions, setRevisions] = useState<ProcedureRevision[]>([]);
  const [listProblem, setListProblem] = useState<string | null>(null);
  const [shownId, setShownId] = useState<number | null>(null);
  const [message, setMessage] = useState<{ text: string; problem: boolean } | null>(null);
  const importing = useRef(false);
  const [busy, setBusy] = useState(false);

  const load = useCallback(async () => {
    try {
      setRevisions(await call('listProcedureRevisions', {}));
      setListProblem(null);
    } catch (error) {
      setListProblem(problemText(error, 'The stored procedures could not be read', 'Close the Station view and open it again.'));
    }
  }, []);
  useEffect(() => void load(), [load]);

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
      if (result.id !== undefined) setShownId(result.id);
      onImported();
      await load();
    } catch (error) {
      setMessage({ text: problemText(error, 'The procedure was not imported', 'Choose the file again.'), problem: true });
    } finally {
      importing.current = false;
      setBusy(false);
    }
  }

  // Until one is chosen, the revision new runs of the first procedure use.
  const shown = revisions.find((r) => r.id === shownId) ?? revisions.find((r) => r.current) ?? null;
  const models = [...new Set(revisions.map((r) => r.modelCode))];

  function moveBetweenRevisions(event: KeyboardEvent<HTMLElement>) {
    if (event.key !== 'ArrowDown' && event.key !== 'ArrowUp') return;
    const buttons = [...event.currentTarget.querySelectorAll<HTMLButtonElement>('button[data-revision]')];
    const at = buttons.indexOf(document.activeElement as HTMLButtonElement);
    if (at < 0) return;
    event.preventDefault();
    buttons[Math.min(buttons.length - 1, Math.max(0, at + (event.key === 'ArrowDown' ? 1 : -1)))].focus();
  }

  return (
    <section className="panel procedures-panel" aria-label="Procedures" data-testid="procedures-panel">
      <h2>Procedures</h2>
      {listProblem && (
        <p className="problem" role="alert">
          {listProblem}
        </p>
      )}
      <div className="procedures-layout">
        <nav aria-label="Stored procedure revisions" onKeyDown={moveBetweenRevisions} data-testid="procedure-revisions">
          {models.map((modelCode) => {
            const ofModel = revisions.filter((r) => r.modelCode === modelCode);
            const { model } = ofModel.at(-1)!.file;
            return (
              <div key={modelCode} className="procedure-model">
                <h3>
                  {model.code} — {model.name}
                </h3>
                <div className="hint">{model.maker}</div>
                <ul>
                  {ofModel.map((r) => (
                    <li key={r.id}>
                      <button type="button" data-revision={r.id} aria-pressed={shown?.id === r.id} onClick={() => setShownId(r.id)}>
                        {r.code} rev {r.revision}
                      </button>
                      <span className="hint">
                        {r.current ? 'new runs use it' : 'earlier revision'} · {r.runs} run{r.runs === 1 ? '' : 's'}
                        {r.file.invented && ' · invented (demo)'}
                      </span>
                    </li>
                  ))}
                </ul>
              </div>
            );
          })}
        </nav>
        {shown && <RevisionSteps revision={shown} />}
      </div>
      <button type="button" onClick={() => void importFile()} disabled={busy} data-testid="import-procedure">
        Import procedure…
      </button>
      <p className={message?.problem ? 'problem' : 'hint'} role={message?.problem ? 'alert' : 'status'} data-testid="import-message" hidden={message === null}>
        {message?.text}
      </p>
    </section>
  );
}

/** One revision's steps in order: what each asks for, its other parameters and its limits. */
function RevisionSteps({ revision: { file, code, revision, runs } }: { revision: ProcedureRevision }) {
  return (
    <div className="procedure-steps" data-testid="procedure-steps">
      <h3>
        {code} revision {revision}: {file.title}
      </h3>
      <p className="hint">
        Serial like {file.serial.example} (pattern {file.serial.pattern}) · {file.requiresCalibration ? 'needs a calibrated station' : 'runs without a calibration'} ·{' '}
        {runs} run{runs === 1 ? '' : 's'} name this revision; a stored revision never changes.
      </p>
      <table className="history procedure-step-table">
        <thead>
          <tr>
            <th scope="col">#</th>
            <th scope="col">Step</th>
            <th scope="col">Asks for</th>
            <th scope="col">Limits</th>
            <th scope="col">On failure</th>
          </tr>
        </thead>
        <tbody>
          {file.steps.map((step, i) => {
            const limits = stepLimits(step);
            return (
              <tr key={step.id}>
                <td>{i + 1}</td>
                <th scope="row">
                  {step.title}
                  <span className="hint block">
                    {step.kind} · {step.id}
                  </span>
                </th>
                <td>
                  {stepConditions(step)}
                  {stepDetails(step).map((line) => (
                    <span key={line} className="hint block">
                      {line}
                    </span>
                  ))}
                </td>
                <td>
                  {limits.length === 0
                    ? '—'
                    : limits.map((l) => (
                        <span key={l.quantity} className="block">
                          {l.label} {l.text}
                        </span>
                      ))}
                </td>
                <td>{step.kind === 'notice' ? 'must be acknowledged' : step.onFail === 'stop' ? 'stop the run' : 'go on; the unit fails'}</td>
              </tr>
            );
          })}
        </tbody>
      </table>
    </div>
  );
}
