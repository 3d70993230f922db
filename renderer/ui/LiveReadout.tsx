import type { Reading } from '../../shared/measurement/reading.ts';
import { fixed, percent } from './format.ts';

export function LiveReadout({ reading }: { reading: Reading | null }) {
  if (!reading) {
    return (
      <section className="panel readout" aria-label="Live reading">
        <h2>Live reading</h2>
        <p className="hint">Start capture to see the unit’s output.</p>
      </section>
    );
  }
  const noSignal = reading.flags.includes('no-signal');
  return (
    <section className="panel readout" aria-label="Live reading">
      <h2>
        Live reading{' '}
        <span className={reading.settled ? 'badge ok' : 'badge'} data-testid="settle-state">
          {reading.settled ? 'settled' : `settling ${Math.round(reading.settleProgress * 100)} %`}
        </span>
      </h2>
      <progress max={1} value={reading.settleProgress} aria-label="Progress toward a settled reading" />
      <div className="big-numbers">
        <div>
          <span className="big" data-testid="fundamental-level">
            {noSignal ? '—' : fixed(reading.fundamental.levelDbfs, 2)}
          </span>
          <span className="unit">dBFS</span>
          <div className="caption">fundamental {noSignal ? '' : `at ${fixed(reading.fundamental.frequencyHz, 2)} Hz`}</div>
        </div>
        <div>
          <span className="big" data-testid="thd-db">
            {noSignal ? '—' : fixed(reading.thdDb, 1)}
          </span>
          <span className="unit">dB THD</span>
          <div className="caption">{noSignal ? '' : percent(reading.thdPercent)} (H2–H{reading.harmonics.at(-1)?.order ?? '—'})</div>
        </div>
      </div>
      {noSignal && (
        <p className="problem" role="alert">
          No signal at the input channel. Check the cabling, the channel choice and that the generator is on.
        </p>
      )}
      {reading.flags.includes('clipping') && (
        <p className="problem" role="alert">
          The input is clipping. Lower the level into the interface (or the generator level) until this message goes.
        </p>
      )}
      <table className="harmonics">
        <thead>
          <tr>
            <th scope="col">Harmonic</th>
            <th scope="col">Frequency, Hz</th>
            <th scope="col">Level, dBc</th>
            <th scope="col">Phase, °</th>
          </tr>
        </thead>
        <tbody>
          {reading.harmonics.map((h) => (
            <tr key={h.order} data-testid={`harmonic-${h.order}`}>
              <td>H{h.order}</td>
              <td>{fixed(h.frequencyHz, 1)}</td>
              <td>{fixed(h.levelDbc, 1)}</td>
              <td>{fixed(h.phaseDeg, 0)}</td>
            </tr>
          ))}
        </tbody>
      </table>
      {/* The whole reading, for tools that read the page (capture-check, tests). */}
      <output hidden data-testid="reading-json" data-reading={JSON.stringify(reading)} />
    </section>
  );
}
