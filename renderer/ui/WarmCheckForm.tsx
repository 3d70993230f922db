import { useState } from 'react';
import type { WarmCheck } from '../../shared/ipc/contract.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import { problemText } from '../problem-text.ts';
import { fixed } from './format.ts';

/** The optional warm re-check: how much of the warm-up drift the unit's own tracking held. */
export function WarmCheckForm({
  reading,
  existing,
  onWarmCheck,
}: {
  reading: Reading | null;
  existing: WarmCheck | null;
  onWarmCheck(request: { coldTemperatureC: number; warmTemperatureC: number; reading: Reading }): Promise<WarmCheck>;
}) {
  const [cold, setCold] = useState('');
  const [warm, setWarm] = useState('');
  const [message, setMessage] = useState<string | null>(null);
  const [result, setResult] = useState<WarmCheck | null>(existing);
  async function submit() {
    const coldC = Number(cold);
    const warmC = Number(warm);
    if (cold.trim() === '' || warm.trim() === '' || !Number.isFinite(coldC) || !Number.isFinite(warmC)) {
      return setMessage('Enter both temperatures in °C.');
    }
    if (!reading?.settled) return setMessage('Wait for a settled reading at the final setting.');
    try {
      setResult(await onWarmCheck({ coldTemperatureC: coldC, warmTemperatureC: warmC, reading }));
      setMessage(null);
    } catch (error) {
      setMessage(problemText(error, 'The warm re-check was not recorded', 'Press Record warm reading again.'));
    }
  }
  return (
    <details className="warm-check">
      <summary>Warm re-check (optional, after the unit has warmed up)</summary>
      <div className="row">
        <label>
          Temperature at trim, °C
          <input inputMode="decimal" value={cold} onChange={(e) => setCold(e.target.value)} />
        </label>
        <label>
          Temperature now, °C
          <input inputMode="decimal" value={warm} onChange={(e) => setWarm(e.target.value)} />
        </label>
        <button type="button" onClick={() => void submit()}>
          Record warm reading
        </button>
      </div>
      {message && (
        <p className="problem" role="alert">
          {message}
        </p>
      )}
      {result && (
        <p className="hint" data-testid="warm-check-result">
          {fixed(result.warmTemperatureC - result.coldTemperatureC, 1)} °C warmer: the unit’s own tracking held{' '}
          {fixed(100 * result.trackingFraction, 0)} % of the drift an untracked winding would show.
        </p>
      )}
    </details>
  );
}
