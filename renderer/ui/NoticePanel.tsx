import { useState, type RefObject } from 'react';
import { problemText } from '../problem-text.ts';

/** A notice step: the technician reads it and acknowledges it (Enter). Nothing plays meanwhile. */
export function NoticePanel({
  acknowledgement,
  pending,
  primaryRef,
  onAcknowledge,
}: {
  acknowledgement: string;
  pending: boolean;
  primaryRef: RefObject<HTMLButtonElement | null>;
  onAcknowledge(): Promise<unknown>;
}) {
  const [message, setMessage] = useState<string | null>(null);
  async function acknowledge() {
    try {
      await onAcknowledge();
      setMessage(null);
    } catch (error) {
      setMessage(problemText(error, 'The acknowledgement was not recorded', 'Press Enter to acknowledge again.'));
    }
  }
  return (
    <div className="notice-step">
      <p className="acknowledgement">{acknowledgement}</p>
      <button type="button" className="primary" ref={primaryRef} autoFocus disabled={pending} onClick={() => void acknowledge()} data-testid="acknowledge">
        I acknowledge (Enter)
      </button>
      <p className="problem" role="alert" hidden={message === null} data-testid="notice-message">
        {message}
      </p>
    </div>
  );
}
