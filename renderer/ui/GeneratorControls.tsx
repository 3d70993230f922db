import { useEffect, useState } from 'react';
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
      {!set && <p className="hint">Opening a unit sets the stimulus from its procedure.</p>}
      {set && !available && <p className="hint">Start capture to use the generator.</p>}
    </section>
  );
}
