import { useRef, useState, type RefObject } from 'react';
import type { StoredProcedure } from '../../shared/ipc/contract.ts';
import { checkSerial } from '../../shared/records/serial.ts';
import { problemText } from '../problem-text.ts';

/**
 * Operator, procedure and serial. The serial field takes a barcode scanner as it is: the
 * scanner types fast and ends with Enter, which opens the unit's run.
 */
export function UnitEntry({
  procedures,
  onOpen,
  busy,
  serialInputRef,
}: {
  procedures: StoredProcedure[];
  /** The serial field, so focus can be sent back to it (after the sheet, after the generator key). */
  serialInputRef: RefObject<HTMLInputElement | null>;
  onOpen(request: { serial: string; procedureId: number; operator: string }): Promise<void>;
  busy: boolean;
}) {
  const [operator, setOperator] = useState(() => localStorage.getItem('trimbench.operator') ?? '');
  const [procedureId, setProcedureId] = useState<number | null>(procedures[0]?.id ?? null);
  const [serialText, setSerialText] = useState('');
  const [message, setMessage] = useState<string | null>(null);
  // A scanner may send Enter twice; one unit is opened once.
  const opening = useRef(false);
  const procedure = procedures.find((p) => p.id === procedureId) ?? procedures[0];

  async function submit() {
    if (!procedure) return setMessage('No procedure is available on this station.');
    if (operator.trim() === '') return setMessage('Enter the operator name first.');
    const check = checkSerial(serialText, procedure.definition);
    if (!check.ok) return setMessage(check.message);
    if (opening.current) return;
    opening.current = true;
    setMessage(null);
    localStorage.setItem('trimbench.operator', operator.trim());
    try {
      await onOpen({ serial: check.serial, procedureId: procedure.id, operator: operator.trim() });
      setSerialText('');
    } catch (error) {
      setMessage(problemText(error, 'The unit was not opened', 'Press Open unit again.'));
    } finally {
      opening.current = false;
    }
  }

  return (
    <section className="panel" aria-label="Unit">
      <h2>Unit</h2>
      <label>
        Operator
        <input value={operator} onChange={(e) => setOperator(e.target.value)} maxLength={60} autoComplete="off" />
      </label>
      <label>
        Procedure
        <select value={procedure?.id ?? ''} onChange={(e) => setProcedureId(Number(e.target.value))}>
          {procedures.map((p) => (
            <option key={p.id} value={p.id}>
              {p.definition.code} rev {p.definition.revision}
            </option>
          ))}
        </select>
      </label>
      {/* The full title under the list: a long title inside the list would be cut off. */}
      {procedure && <p className="hint">{procedure.definition.title}</p>}
      {procedure?.definition.invented && (
        <p className="invented">Demo procedure: the maker, model and limits are invented for practice.</p>
      )}
      <label>
        Serial number (scan or type, then Enter)
        <input
          ref={serialInputRef}
          data-testid="serial-input"
          // Ready for the scanner as soon as an operator is known.
          autoFocus={operator.trim() !== ''}
          value={serialText}
          placeholder={procedure?.definition.serial.example}
          autoComplete="off"
          spellCheck={false}
          onChange={(e) => setSerialText(e.target.value)}
          onKeyDown={(e) => {
            if (e.key === 'Enter') {
              e.preventDefault();
              void submit();
            }
          }}
          aria-invalid={message !== null}
          aria-describedby="serial-message"
        />
      </label>
      <button type="button" className="primary" onClick={() => void submit()} disabled={busy}>
        Open unit
      </button>
      <p id="serial-message" className="problem" role="alert" data-testid="serial-message" hidden={message === null}>
        {message}
      </p>
    </section>
  );
}
