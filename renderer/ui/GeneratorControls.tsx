import { useEffect, useRef, useState } from 'react';
import { SQUARE_MAX_LEVEL_DBFS } from '../../shared/dsp/square-wave.ts';
import { fixed } from '../../shared/format.ts';
import type { GeneratorCommand } from '../worker/messages.ts';

const MIN_FREQUENCY_HZ = 5;
const MAX_FREQUENCY_HZ = 20000;

/**
 * A number field that applies its value on Enter or when it loses focus, never per keystroke:
 * typing “-60” must not pass through −6 dBFS on its way.
 */
function CommitField({
  label,
  value,
  onCommit,
  check,
}: {
  label: string;
  /** null: nothing set yet (the field stays empty and says who sets it). */
  value: number | null;
  onCommit(value: number): void;
  check(value: number): string | null;
}) {
  // Shown to four decimals (a planned 13.916015625 Hz reads 13.916); Enter on the text as shown
  // keeps the exact value set, so looking at the field never moves the generator.
  const shown = value === null ? '' : String(Number(value.toFixed(4)));
  const [text, setText] = useState(shown);
  const [problem, setProblem] = useState<string | null>(null);
  useEffect(() => setText(shown), [shown]);
  const commit = () => {
    const parsed = Number(text);
    const issue = text.trim() === '' || !Number.isFinite(parsed) ? 'Enter a number.' : check(parsed);
    setProblem(issue);
    if (issue) return;
    if (parsed !== value && text !== shown) onCommit(parsed);
  };
  return (
    <label>
      {label}
      <input
        inputMode="decimal"
        value={text}
        placeholder={value === null ? 'set by the unit’s procedure' : undefined}
        onChange={(e) => setText(e.target.value)}
        onBlur={commit}
        onKeyDown={(e) => {
          if (e.key === 'Enter') commit();
        }}
        aria-invalid={problem !== null}
      />
      {problem && <span className="problem">{problem}</span>}
    </label>
  );
}

const MAX_STEPS = 64;
const MIN_DWELL_S = 0.2;
const MAX_DWELL_S = 600;

/** The frequencies typed for a stepped sine, or why they cannot be played. */
function parseSteps(text: string): { ok: true; hz: number[] } | { ok: false; problem: string } {
  const parts = text.split(/[\s,;]+/).filter((p) => p !== '');
  if (parts.length === 0) return { ok: false, problem: 'Enter the frequencies, e.g. 20, 100, 1000, 10000.' };
  if (parts.length > MAX_STEPS) return { ok: false, problem: `At most ${MAX_STEPS} frequencies.` };
  const hz = parts.map(Number);
  const bad = hz.findIndex((f) => !Number.isFinite(f) || f < MIN_FREQUENCY_HZ || f > MAX_FREQUENCY_HZ);
  if (bad >= 0) return { ok: false, problem: `“${parts[bad]}” is not a frequency between ${MIN_FREQUENCY_HZ} and ${MAX_FREQUENCY_HZ} Hz.` };
  return { ok: true, hz };
}

/**
 * A sine stepped through a list of frequencies, each held for the dwell time, at the generator's
 * level. Each step is an ordinary frequency change (phase-continuous; the meter starts a fresh
 * stretch). Anything that mutes the generator (Esc, the button, a stopped capture) stops it.
 */
function SteppedSine({ command, onChange, disabled }: { command: GeneratorCommand; onChange(command: GeneratorCommand): void; disabled: boolean }) {
  const [listText, setListText] = useState('20, 100, 1000, 10000, 20000');
  const [dwellText, setDwellText] = useState('2');
  const [problem, setProblem] = useState<string | null>(null);
  const [progress, setProgress] = useState<{ hz: number[]; index: number } | null>(null);
  const timer = useRef<ReturnType<typeof setTimeout> | null>(null);
  const latest = useRef(command);
  latest.current = command;

  const stop = () => {
    if (timer.current !== null) clearTimeout(timer.current);
    timer.current = null;
    setProgress(null);
  };
  // Muted from anywhere (Esc included): the stepping ends with it.
  useEffect(() => {
    if (!command.on && progress) stop();
  }, [command.on]); // eslint-disable-line react-hooks/exhaustive-deps
  useEffect(() => stop, []);

  function start() {
    const steps = parseSteps(listText);
    const dwell = Number(dwellText);
    if (!steps.ok) return setProblem(steps.problem);
    if (!(dwell >= MIN_DWELL_S && dwell <= MAX_DWELL_S)) return setProblem(`The dwell time must be between ${MIN_DWELL_S} and ${MAX_DWELL_S} s.`);
    setProblem(null);
    const play = (index: number) => {
      if (index >= steps.hz.length) {
        onChange({ ...latest.current, on: false });
        return stop();
      }
      setProgress({ hz: steps.hz, index });
      onChange({ ...latest.current, frequencyHz: steps.hz[index], waveform: 'sine', on: true });
      // A mute that lands just before the dwell ends must not be undone by the next step.
      timer.current = setTimeout(() => (latest.current.on ? play(index + 1) : stop()), dwell * 1000);
    };
    play(0);
  }

  return (
    <fieldset className="stepped-sine" data-testid="stepped-sine">
      <legend>Stepped sine</legend>
      <label>
        Frequencies, Hz
        <input value={listText} onChange={(e) => setListText(e.target.value)} disabled={progress !== null} />
      </label>
      <label>
        Dwell, s
        <input inputMode="decimal" value={dwellText} onChange={(e) => setDwellText(e.target.value)} disabled={progress !== null} />
      </label>
      {progress ? (
        <>
          <p data-testid="stepped-progress" aria-live="polite">
            Step {progress.index + 1} of {progress.hz.length}: {progress.hz[progress.index]} Hz. Esc stops.
          </p>
          <button type="button" onClick={() => onChange({ ...latest.current, on: false })} data-testid="stepped-stop">
            Stop (Esc)
          </button>
        </>
      ) : (
        <button type="button" onClick={start} disabled={disabled} data-testid="stepped-start">
          Step through
        </button>
      )}
      {problem && <span className="problem">{problem}</span>}
    </fieldset>
  );
}

export function GeneratorControls({
  command,
  set,
  onChange,
  onToggle,
  available,
  note,
}: {
  command: GeneratorCommand;
  /** False until a unit's procedure or the technician has set frequency and level. */
  set: boolean;
  onChange(command: GeneratorCommand): void;
  onToggle(): void;
  available: boolean;
  /** Why the frequency is what it is, when it was planned. */
  note: string | null;
}) {
  return (
    <section className="panel" aria-label="Generator">
      <h2>
        Generator <span className={command.on ? 'badge live' : 'badge'}>{command.on ? 'ON' : 'muted'}</span>
      </h2>
      <CommitField
        label="Frequency, Hz (Enter applies)"
        value={set ? command.frequencyHz : null}
        check={(hz) => (hz < MIN_FREQUENCY_HZ || hz > MAX_FREQUENCY_HZ ? `Between ${MIN_FREQUENCY_HZ} and ${MAX_FREQUENCY_HZ} Hz.` : null)}
        onCommit={(frequencyHz) => onChange({ ...command, frequencyHz })}
      />
      <CommitField
        label="Level, dBFS (Enter applies)"
        value={set ? command.levelDbfs : null}
        check={(dbfs) => (dbfs > 0 || dbfs < -120 ? 'Between −120 and 0 dBFS.' : null)}
        onCommit={(levelDbfs) => onChange({ ...command, levelDbfs })}
      />
      <label>
        Waveform
        <select
          value={command.waveform ?? 'sine'}
          disabled={!set}
          onChange={(e) => onChange({ ...command, waveform: e.target.value === 'square' ? 'square' : 'sine' })}
          data-testid="generator-waveform"
        >
          <option value="sine">sine</option>
          <option value="square">square (band-limited)</option>
        </select>
      </label>
      {command.waveform === 'square' && (
        <p className="hint">
          A square’s level sets its flat top (its RMS is 3 dB above a sine’s of that level); the top is held at or below {fixed(SQUARE_MAX_LEVEL_DBFS, 1)} dBFS so its edges never clip. The meter
          reads sines: nothing is recorded from a square.
        </p>
      )}
      <button
        type="button"
        className={command.on ? '' : 'primary'}
        disabled={!available || !set}
        onClick={onToggle}
        data-testid="generator-toggle"
      >
        {command.on ? 'Turn off (G)' : 'Turn on (G)'}
      </button>
      {note && <p className="hint">{note}</p>}
      <SteppedSine command={command} onChange={onChange} disabled={!available || !set} />
      {!set && <p className="hint">Opening a unit sets the stimulus from its procedure.</p>}
      {set && !available && <p className="hint">Start capture to use the generator.</p>}
    </section>
  );
}
