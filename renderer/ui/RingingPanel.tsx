// The ringing step: the square wave plays while the technician captures the unit's output on an
// oscilloscope, then attaches the scope's CSV export. Main chooses, reads and judges the file; this
// panel only asks for it and shows what main stored.

import { useState, type RefObject } from 'react';
import type { StepResult } from '../../shared/ipc/contract.ts';
import { squareTerms } from '../../shared/dsp/square-wave.ts';
import type { RingingStep } from '../../shared/procedures/procedure-file.ts';
import { maxRiseTimeS, usText } from '../../shared/procedures/ringing.ts';
import type { PlannedStep } from '../../shared/procedures/run-plan.ts';
import { hzText } from '../../shared/procedures/step-text.ts';
import { fixed } from '../../shared/format.ts';
import { problemText } from '../problem-text.ts';
import type { GeneratorCommand } from '../worker/messages.ts';
import { StepResultView } from './StepResultView.tsx';

export function RingingPanel({
  step,
  planned,
  generator,
  generatorAvailable,
  sampleRateHz,
  onToggleGenerator,
  pending,
  primaryRef,
  result,
  onAttach,
}: {
  step: RingingStep;
  planned: PlannedStep;
  generator: GeneratorCommand;
  generatorAvailable: boolean;
  /** The rate the generator plays at: what it can hold of the square's harmonics. */
  sampleRateHz: number;
  onToggleGenerator(): void;
  pending: boolean;
  primaryRef: RefObject<HTMLButtonElement | null>;
  /** The step's latest stored result (a repeat shows what it replaces). */
  result: StepResult | null;
  /** Resolves null when another call was in flight. */
  onAttach(): Promise<'recorded' | 'cancelled' | null>;
}) {
  const [message, setMessage] = useState<string | null>(null);
  const square = planned.needs.kind === 'scope' ? planned.needs.generator : null;
  const playing = square !== null && generator.on && generator.waveform === 'square' && generator.frequencyHz === square.frequencyHz && generator.levelDbfs === square.levelDbfs;
  const harmonics = square ? squareTerms(square.frequencyHz, sampleRateHz) : 0;

  async function attach() {
    setMessage(null);
    try {
      const outcome = await onAttach();
      if (outcome === 'cancelled') setMessage('No file was chosen; nothing was recorded.');
    } catch (error) {
      setMessage(problemText(error, 'The scope capture was not recorded', 'Attach the file again.'));
    }
  }

  return (
    <div className="ringing-step" data-testid="ringing-panel">
      <div className="cautions" role="note" data-testid="ringing-caution">
        <p>
          <strong>Caution:</strong> a unit that rings badly may break into oscillation and drive whatever is connected hard. Terminate the output with a dummy load of the rated impedance, never
          loudspeakers, and keep headphones off the bench.
        </p>
        <p>
          Why an oscilloscope: an audio interface cannot see ringing at 100 kHz and above (its band ends below half its sample rate), so the figures come from the scope’s record of the unit’s
          output.
        </p>
      </div>
      <p data-testid="ringing-square">
        Square wave {hzText(step.squareHz)} at {fixed(step.level.value, 1)} {step.level.unit}
        {square && step.level.unit === 'dBu' ? ` (${fixed(square.levelDbfs, 1)} dBFS)` : ''}:{' '}
        <strong data-testid="ringing-generator-state">{playing ? 'playing' : 'not playing'}</strong>
        {square && (
          <span className="hint">
            {' '}
            — a quick look and a setup aid only (scope triggering, levels): at {fixed(sampleRateHz / 1000, 1)} kHz it holds{' '}
            {harmonics === 1 ? 'only its fundamental' : `only its first ${harmonics} odd harmonics`}, an edge too slow to excite the ringing.
          </span>
        )}
      </p>
      <p className="hint" data-testid="ringing-generator-needed">
        The measurement needs a function generator with a fast edge (rise time under {usText(maxRiseTimeS(step))}) playing a square wave at {hzText(step.squareHz)}: a record whose edges
        are slower is refused.
      </p>
      {planned.blocked && <p className="problem">{planned.blocked}</p>}
      <p className="hint">Capture a few periods on the scope’s voltage column {step.channel} (counted from 0), export the record as CSV, then attach it here.</p>
      <div className="row">
        {!playing && square && (
          <button type="button" onClick={onToggleGenerator} disabled={!generatorAvailable} data-testid="ringing-play">
            Play the square wave (G)
          </button>
        )}
        <button type="button" className="primary" ref={primaryRef} onClick={() => void attach()} disabled={pending} data-testid="attach-scope-capture">
          Attach scope capture…
        </button>
      </div>
      {!generatorAvailable && <p className="hint">Start capture (Audio interface) to play the square wave through the interface.</p>}
      {message && (
        <p className="problem" role="alert" data-testid="ringing-message">
          {message}
        </p>
      )}
      {result && <StepResultView result={result} />}
    </div>
  );
}
