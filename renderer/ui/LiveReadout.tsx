import { AT_FLOOR_MARGIN_DB } from '../../shared/calibration/station-calibration.ts';
import { dbuFromDbfs, formatLevel, signedFixed, type LevelCalibration } from '../../shared/levels.ts';
import type { Reading } from '../../shared/measurement/reading.ts';
import type { StimulusCheck } from '../../shared/records/stimulus-check.ts';
import { judgeThd } from '../../shared/records/verdict.ts';
import { fixed, percent } from './format.ts';

/** A big number, or a quiet placeholder where there is none (a bold 3rem dash reads as a black bar). */
function Big({ value, testId }: { value: string | null; testId: string }) {
  return value === null ? (
    <span className="big none" data-testid={testId}>
      no reading
    </span>
  ) : (
    <span className="big" data-testid={testId}>
      {value}
    </span>
  );
}

export function LiveReadout({
  reading,
  generatorOn,
  generatorWanted,
  limitThdDb,
  harmonicCount,
  stimulusCheck,
  inputCalibration = null,
}: {
  reading: Reading | null;
  /** The station's input calibration while it holds; null shows levels in dBFS only. */
  inputCalibration?: LevelCalibration | null;
  generatorOn: boolean;
  /** Whether the step being measured wants the generator on (generatorWanted in run-plan.ts); null when none does. */
  generatorWanted: boolean | null;
  /** Whether the reading is the open unit's answer to the stimulus playing; null with no unit open. */
  stimulusCheck: StimulusCheck | null;
  /** The open unit's THD limit; null with no unit open. */
  limitThdDb: number | null;
  /** Harmonics counted in THD (H2..HN), shown even while no harmonic is measured. */
  harmonicCount: number;
}) {
  if (!reading) {
    return (
      <section className="panel readout" aria-label="Live reading">
        <h2>Live reading</h2>
        <p className="hint">Start capture to see the unit’s output.</p>
      </section>
    );
  }
  const noSignal = reading.flags.includes('no-signal');
  // With the generator muted, silence is expected: said calmly, and nothing is claimed about a fundamental.
  const quietByDesign = !generatorOn && (noSignal || stimulusCheck !== null);
  const notTheStimulus = stimulusCheck && !stimulusCheck.ok && stimulusCheck.problem !== 'generator-off' ? stimulusCheck.message : null;
  const lastOrder = reading.harmonics.at(-1)?.order ?? harmonicCount;
  const noHarmonics = !noSignal && reading.harmonics.length === 0;
  // Against the limit only when the reading is the unit's answer to the stimulus: a green "within"
  // beside a foreign tone would read as a pass.
  const thdVerdict = !noSignal && !noHarmonics && limitThdDb !== null && stimulusCheck?.ok ? judgeThd(reading.thdDb, limitThdDb) : null;
  return (
    <section className="panel readout" aria-label="Live reading">
      <h2>
        Live reading{' '}
        <span className={reading.settled ? 'badge ok' : 'badge'} data-testid="settle-state">
          {reading.settled ? 'settled' : `settling ${Math.round(reading.settleProgress * 100)} %`}
        </span>
      </h2>
      <p className="hint settle-time" data-testid="settle-time">
        {settleText(reading, notTheStimulus !== null || quietByDesign)}
      </p>
      <progress max={1} value={reading.settleProgress} aria-label="Progress toward a settled reading" />
      <div className="big-numbers">
        {inputCalibration && !noSignal ? (
          // Calibrated: the level at the unit's terminals is the big number, the interface's dBFS beside it.
          <div>
            <Big value={signedFixed(dbuFromDbfs(reading.fundamental.levelDbfs, inputCalibration), 2)} testId="fundamental-dbu" />
            <span className="unit">dBu</span>
            <div className="caption">
              <span data-testid="fundamental-level">{fixed(reading.fundamental.levelDbfs, 2)}</span> dBFS · fundamental at{' '}
              {fixed(reading.fundamental.frequencyHz, 2)} Hz
            </div>
          </div>
        ) : (
          <div>
            <Big value={noSignal ? null : fixed(reading.fundamental.levelDbfs, 2)} testId="fundamental-level" />
            {!noSignal && <span className="unit">dBFS</span>}
            <div className="caption">fundamental{noSignal ? '' : ` at ${fixed(reading.fundamental.frequencyHz, 2)} Hz`}</div>
          </div>
        )}
        <div>
          {/* A tone whose harmonics all lie at or above Nyquist has no THD to show, not a THD of −300 dB. */}
          <Big value={noSignal ? null : noHarmonics ? '—' : fixed(reading.thdDb, 1)} testId="thd-db" />
          {!noSignal && <span className="unit">dB THD</span>}
          <div className="caption">{noHarmonics ? 'no harmonic below Nyquist' : `${noSignal ? '' : `${percent(reading.thdPercent)} · `}H2–H${lastOrder}`}</div>
          {thdVerdict && limitThdDb !== null && (
            <div className={`limit ${thdVerdict}`} data-testid="thd-limit">
              limit ≤ {fixed(limitThdDb, 1)} dB: {thdVerdict === 'pass' ? 'within' : 'above the limit'}
            </div>
          )}
        </div>
      </div>
      {quietByDesign &&
        (generatorWanted === false ? (
          <p className="hint" role="status" data-testid="generator-off-note">
            The generator stays off for this step: the reading is the unit’s output with no tone.
          </p>
        ) : (
          <p className="hint" role="status" data-testid="generator-off-note">
            The generator is off, so there is no tone to measure yet. Turn it on (<kbd>G</kbd>) when the unit is connected.
          </p>
        ))}
      {generatorOn && generatorWanted === false ? (
        <p className="problem" role="alert" data-testid="generator-unwanted">
          The generator is on, and this step is done with it off. Press <kbd>Esc</kbd> to mute it.
        </p>
      ) : notTheStimulus ? (
        <p className="problem" role="alert" data-testid="stimulus-problem">
          Not recordable: {notTheStimulus}
        </p>
      ) : (
        noSignal &&
        generatorOn && (
          <p className="problem" role="alert">
            No signal at the input channel. Check the cabling, the channel choice and that the generator is on.
          </p>
        )
      )}
      {reading.flags.includes('at-floor') && !noSignal && (
        <p className="hint at-floor" role="status" data-testid="at-floor-note">
          At the station’s floor: this THD is within {AT_FLOOR_MARGIN_DB} dB of the chain’s own residual, so the unit may be better than
          this reading.
        </p>
      )}
      {reading.mainsCoincidentOrders.length > 0 && (
        <p className="hint" role="status" data-testid="mains-coincident">
          {reading.mainsCoincidentOrders.map((order) => `H${order}`).join(', ')} {reading.mainsCoincidentOrders.length === 1 ? 'lies' : 'lie'} on
          mains hum or one of its multiples: {reading.mainsCoincidentOrders.length === 1 ? 'its level may include' : 'their levels may include'} the
          hum and cannot be told apart from it. Move the test frequency slightly, or treat {reading.mainsCoincidentOrders.length === 1 ? 'it' : 'them'} as an upper bound.
        </p>
      )}
      {reading.flags.includes('clipping') && !notTheStimulus && (
        <p className="problem" role="alert">
          The input is clipping. Lower the level into the interface (or the generator level) until this message goes.
        </p>
      )}
      <dl className="facts readout-facts" data-testid="reading-details">
        <dt>THD+N (band)</dt>
        <dd>{noSignal ? '—' : `${fixed(reading.thdnDb, 1)} dB · ${percent(reading.thdnPercent)} · SINAD ${fixed(reading.sinadDb, 1)} dB`}</dd>
        <dt>Noise</dt>
        <dd data-testid="noise">
          {formatLevel(reading.noiseDbfs, inputCalibration)} · A-weighted {formatLevel(reading.noiseAWeightedDbfs, inputCalibration)}
        </dd>
        <dt>Hum</dt>
        <dd data-testid="hum">
          {reading.hum
            ? `${fixed(reading.hum.frequencyHz, 2)} Hz at ${formatLevel(reading.hum.levelDbfs, inputCalibration)}` +
              reading.hum.components
                .filter((c) => c.order > 1)
                .map((c) => ` · ×${c.order} ${inputCalibration ? formatLevel(c.levelDbfs, inputCalibration) : fixed(c.levelDbfs, 1)}`)
                .join('')
            : 'none above the noise'}
        </dd>
        <dt>Sub-audio</dt>
        <dd>
          {reading.subAudioDbfs === null
            ? generatorOn
              ? '— (measured after about 6 s of a steady tone)'
              : '— (needs the generator on)'
            : formatLevel(reading.subAudioDbfs, inputCalibration)}
        </dd>
        <dt>Analysis</dt>
        <dd>
          {reading.mode === 'coherent' ? 'coherent, in step with the generator' : 'windowed'}
          {!noSignal && reading.mode !== 'coherent' && ', fundamental found'} · {reading.frameSize} samples at {reading.sampleRateHz / 1000} kHz
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

/** Time left to a settled reading, or why none is coming. */
function settleText(reading: Reading, notMeasuring: boolean): string {
  if (notMeasuring) return 'Nothing to settle on until the reading is of the stimulus.';
  if (reading.settled) return 'Settled.';
  if (reading.settleRemainingS === null) return 'Waiting for a steady reading…';
  return `About ${Math.max(1, Math.ceil(reading.settleRemainingS))} s to settled, if nothing moves.`;
}
