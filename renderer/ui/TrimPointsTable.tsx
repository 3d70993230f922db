import type { TrimPoint } from '../../shared/ipc/contract.ts';
import { AT_FLOOR_MARGIN_DB } from '../../shared/calibration/station-calibration.ts';
import { dbuFromDbfs, signedFixed, type LevelCalibration } from '../../shared/levels.ts';
import { harmonicLevel } from '../../shared/procedures/check-steps.ts';
import { fixed, percent } from './format.ts';

/** The recorded trim points, with the offer to include an unsettled one in the fit. */
export function TrimPointsTable({
  points,
  harmonicOrder,
  inputCalibration,
  busy,
  onInclude,
}: {
  points: readonly TrimPoint[];
  harmonicOrder: number;
  inputCalibration: LevelCalibration | null;
  busy: boolean;
  onInclude(pointId: number): void;
}) {
  const harmonic = `H${harmonicOrder}`;
  return (
    <>
      <div className="table-scroll">
        <table className="points" data-testid="trim-points">
          <thead>
            <tr>
              <th scope="col">#</th>
              <th scope="col">Position</th>
              <th scope="col">{harmonic}, dBc</th>
              <th scope="col">THD, dB</th>
              <th scope="col">THD, %</th>
              <th scope="col">{inputCalibration ? 'Level, dBu / dBFS' : 'Level, dBFS'}</th>
              <th scope="col">Settled</th>
            </tr>
          </thead>
          <tbody>
            {points.map((p) => {
              const level = harmonicLevel(p.reading, harmonicOrder);
              return (
                <tr key={p.id}>
                  <td>{p.sequence}</td>
                  <td>{fixed(p.position, 2)}</td>
                  <td title={level.measured ? (level.note ?? undefined) : level.message}>{level.measured ? fixed(level.levelDbc, 1) : '—'}</td>
                  <td className={p.reading.flags.includes('at-floor') ? 'at-floor' : undefined}>
                    {fixed(p.reading.thdDb, 1)}
                    {p.reading.flags.includes('at-floor') && ' †'}
                  </td>
                  <td>{percent(p.reading.thdPercent).replace(' %', '')}</td>
                  <td>
                    {inputCalibration ? (
                      // Stacked: the narrow column keeps every column in view (Settled included).
                      <>
                        {signedFixed(dbuFromDbfs(p.reading.fundamental.levelDbfs, inputCalibration), 2)}
                        <span className="level-dbfs">{fixed(p.reading.fundamental.levelDbfs, 2)}</span>
                      </>
                    ) : (
                      fixed(p.reading.fundamental.levelDbfs, 2)
                    )}
                  </td>
                  <td className={p.inFit ? undefined : 'unsettled'}>
                    {p.settled ? 'yes' : p.inFit ? 'no, included' : 'unsettled'}
                    {!p.inFit && (
                      <button type="button" className="small" onClick={() => onInclude(p.id)} disabled={busy} data-testid={`include-${p.sequence}`}>
                        Include in fit
                      </button>
                    )}
                  </td>
                </tr>
              );
            })}
          </tbody>
        </table>
      </div>
      {points.some((p) => p.reading.flags.includes('at-floor')) && (
        <p className="hint" data-testid="trim-at-floor-note">
          † At the station’s floor: THD within {AT_FLOOR_MARGIN_DB} dB of the chain’s own residual; the unit may be better than it reads.
        </p>
      )}
      {points.some((p) => !p.inFit) && <p className="hint">Unsettled points are marked in red: they stay out of the curve fit and the verdict unless you include them.</p>}
    </>
  );
}
