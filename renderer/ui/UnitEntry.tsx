import { useRef, useState, type RefObject } from 'react';
import type { IpcResponse, StoredProcedure } from '../../shared/ipc/contract.ts';
import { checkSerial } from '../../shared/records/serial.ts';
import { ApiError, call } from '../api.ts';
import { problemText } from '../problem-text.ts';
import { UnitHistory } from './UnitHistory.tsx';

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
  onOpen(request: { serial: string; procedureId: number; operator: string; retestReason?: string; lot?: string }): Promise<void>;
  busy: boolean;
}) {
  const [operator, setOperator] = useState(() => localStorage.getItem('trimbench.operator') ?? '');
  const [procedureId, setProcedureId] = useState<number | null>(procedures[0]?.id ?? null);
  const [serialText, setSerialText] = useState('');
  // The lot or work order stays for the next unit: a batch is scanned one unit after another.
  const [lot, setLot] = useState('');
  // MAX_LOT_CHARS in the contract (a value from there would pull zod into the page); main checks it too.
  const lotMaxChars = 40;
  const [message, setMessage] = useState<string | null>(null);
  /** Set when main says the unit was tested before: the retest starts only with a reason. */
  const [retestOf, setRetestOf] = useState<{ serial: string; question: string } | null>(null);
  const [reason, setReason] = useState('');
  const [history, setHistory] = useState<{ serial: string; found: IpcResponse<'lookUpUnit'> } | null>(null);
  // A scanner may send Enter twice; one unit is opened once.
  const opening = useRef(false);
  const procedure = procedures.find((p) => p.id === procedureId) ?? procedures[0];

  async function submit(retestReason?: string) {
    if (!procedure) return setMessage('No procedure is available on this station.');
    if (operator.trim() === '') return setMessage('Enter the operator name first.');
    const check = checkSerial(retestOf && retestReason !== undefined ? retestOf.serial : serialText, procedure.definition);
    if (!check.ok) return setMessage(check.message);
    if (retestReason !== undefined && retestReason.trim() === '') return setMessage('Give the reason for the retest.');
    if (opening.current) return;
    opening.current = true;
    setMessage(null);
    localStorage.setItem('trimbench.operator', operator.trim());
    try {
      await onOpen({
        serial: check.serial,
        procedureId: procedure.id,
        operator: operator.trim(),
        ...(retestReason !== undefined ? { retestReason: retestReason.trim() } : {}),
        ...(lot.trim() !== '' ? { lot: lot.trim() } : {}),
      });
      setSerialText('');
      setRetestOf(null);
      setReason('');
      setHistory(null);
    } catch (error) {
      if (error instanceof ApiError && error.kind === 'RetestNeedsReason') {
        setRetestOf({ serial: check.serial, question: error.message });
      } else {
        setMessage(problemText(error, 'The unit was not opened', 'Press Open unit again.'));
      }
    } finally {
      opening.current = false;
    }
  }

  /** The unit's runs, creating nothing. */
  async function lookUp() {
    if (!procedure) return;
    const check = checkSerial(serialText, procedure.definition);
    if (!check.ok) return setMessage(check.message);
    setMessage(null);
    try {
      setHistory({ serial: check.serial, found: await call('lookUpUnit', { serial: check.serial }) });
    } catch (error) {
      setMessage(problemText(error, 'The unit could not be looked up', 'Try again.'));
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
        Lot or work order (optional)
        <input data-testid="lot-input" value={lot} onChange={(e) => setLot(e.target.value)} maxLength={lotMaxChars} autoComplete="off" spellCheck={false} />
      </label>
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
          onChange={(e) => {
            setSerialText(e.target.value);
            setRetestOf(null);
            setHistory(null);
          }}
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
      <div className="row">
        <button type="button" className="primary" onClick={() => void submit()} disabled={busy}>
          Open unit
        </button>
        <button type="button" onClick={() => void lookUp()} data-testid="look-up-unit">
          Look up (creates nothing)
        </button>
      </div>
      {retestOf && (
        <div className="confirm" role="alertdialog" aria-label="Retest" data-testid="retest-reason-form">
          <p>{retestOf.question}</p>
          <label>
            Reason for the retest
            <input
              data-testid="retest-reason"
              value={reason}
              maxLength={200}
              autoFocus
              autoComplete="off"
              onChange={(e) => setReason(e.target.value)}
              onKeyDown={(e) => {
                if (e.key === 'Enter') {
                  e.preventDefault();
                  void submit(reason);
                }
              }}
            />
          </label>
          <div className="row">
            <button type="button" className="primary" onClick={() => void submit(reason)} disabled={busy} data-testid="start-retest">
              Start retest
            </button>
            <button type="button" onClick={() => setRetestOf(null)}>
              Cancel
            </button>
          </div>
        </div>
      )}
      <p id="serial-message" className="problem" role="alert" data-testid="serial-message" hidden={message === null}>
        {message}
      </p>
      {history && <UnitHistory serial={history.serial} history={history.found} />}
    </section>
  );
}
