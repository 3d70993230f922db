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
      {reading.flags.includes('at-floor') && (
        <p className="hint" role="status">
          This reading is within 3 dB of the chain’s own floor: the unit may be better than it reads.
        </p>
      )}
      {reading.flags.includes('clipping') && (
        <p className="problem" role="alert">
          The input is clipping. Lower the level into the interface (or the generator level) until this message goes.
        </p>
      )}
      <dl className="facts readout-facts" data-testid="reading-details">
        <dt>THD+N (band)</dt>
        <dd>{noSignal ? '—' : `${fixed(reading.thdnDb, 1)} dB · ${percent(reading.thdnPercent)} · SINAD ${fixed(reading.sinadDb, 1)} dB`}</dd>
        <dt>Noise</dt>
        <dd>
          {fixed(reading.noiseDbfs, 1)} dBFS · A-weighted {fixed(reading.noiseAWeightedDbfs, 1)} dBFS
        </dd>
        <dt>Hum</dt>
        <dd data-testid="hum">
          {reading.hum
            ? `${fixed(reading.hum.frequencyHz, 2)} Hz at ${fixed(reading.hum.levelDbfs, 1)} dBFS` +
              reading.hum.components
                .filter((c) => c.order > 1)
                .map((c) => ` · ×${c.order} ${fixed(c.levelDbfs, 1)}`)
                .join('')
            : 'none above the noise'}
        </dd>
        <dt>Sub-audio</dt>
        <dd>{reading.subAudioDbfs === null ? '— (needs a stimulus frequency)' : `${fixed(reading.subAudioDbfs, 1)} dBFS`}</dd>
        <dt>Analysis</dt>
        <dd>
          {reading.mode === 'coherent' ? 'coherent, in step with the generator' : 'windowed, fundamental found'} · {reading.frameSize} samples at{' '}
          {reading.sampleRateHz / 1000} kHz
        </dd>
      </dl>
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
      {reading.harmonicsAboveNyquist.length > 0 && (
        <p className="hint">Left out (at or above Nyquist): {reading.harmonicsAboveNyquist.map((o) => `H${o}`).join(', ')}</p>
      )}
      {/* The whole reading, for tools that read the page (capture-check, tests). */}
      <output hidden data-testid="reading-json" data-reading={JSON.stringify(reading)} />
    </section>
  );
}
