import type { GeneratorCommand } from '../worker/messages.ts';

export function GeneratorControls({
  command,
  onChange,
  available,
  note,
}: {
  command: GeneratorCommand;
  onChange(command: GeneratorCommand): void;
  available: boolean;
  /** Why the frequency is what it is, when it was planned. */
  note: string | null;
}) {
  return (
    <section className="panel" aria-label="Generator">
      <h2>
        Generator <span className={command.on ? 'badge live' : 'badge'}>{command.on ? 'ON' : 'muted'}</span>
      </h2>
      <label>
        Frequency, Hz
        <input
          type="number"
          min={1}
          max={20000}
          step="any"
          value={command.frequencyHz}
          onChange={(e) => Number(e.target.value) > 0 && onChange({ ...command, frequencyHz: Number(e.target.value) })}
        />
      </label>
      <label>
        Level, dBFS
        <input
          type="number"
          min={-120}
          max={0}
          step={0.5}
          value={command.levelDbfs}
          onChange={(e) => e.target.value !== '' && onChange({ ...command, levelDbfs: Math.min(0, Number(e.target.value)) })}
        />
      </label>
      <button
        type="button"
        className={command.on ? '' : 'primary'}
        disabled={!available}
        onClick={() => onChange({ ...command, on: !command.on })}
      >
        {command.on ? 'Turn off' : 'Turn on'}
      </button>
      {note && <p className="hint">{note}</p>}
      {!available && <p className="hint">Start capture to use the generator.</p>}
    </section>
  );
}
