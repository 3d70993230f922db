import type { IpcResponse } from '../../shared/ipc/contract.ts';

/** A unit's runs as main holds them: verdict, who and when, the final trimmer position, the sheet. */
export function UnitHistory({ serial, history }: { serial: string; history: IpcResponse<'lookUpUnit'> }) {
  if (history === null) {
    return (
      <p className="hint" data-testid="unit-history">
        No run of {serial} is recorded at this station.
      </p>
    );
  }
  return (
    <div className="unit-history" data-testid="unit-history">
      <h3>
        {history.serial} · {history.modelCode} · {history.runs.length} run{history.runs.length === 1 ? '' : 's'}
      </h3>
      <table className="points history">
        <thead>
          <tr>
            <th>Run</th>
            <th>Verdict</th>
            <th>Final position</th>
            <th>Who, when</th>
            <th>Sheet</th>
          </tr>
        </thead>
        <tbody>
          {history.runs.map((entry) =>
            entry.run === null ? (
              <tr key={entry.runId}>
                <td>{entry.runId}</td>
                <td colSpan={4} className="fail">
                  {entry.unreadable}
                </td>
              </tr>
            ) : (
              <tr key={entry.run.id}>
                <td>
                  {entry.run.id}
                  {entry.run.retestOf !== null && (
                    <div className="hint">
                      retest of {entry.run.retestOf}: {entry.run.retestReason}
                    </div>
                  )}
                </td>
                <td className={entry.run.verdict ?? ''}>{entry.run.verdict ? entry.run.verdict.toUpperCase() : 'unfinished'}</td>
                <td>{entry.finalPosition === null ? '—' : `${entry.finalPosition} (${entry.points} points)`}</td>
                <td>
                  {entry.run.operator}, {(entry.run.finishedAt ?? entry.run.startedAt).slice(0, 16).replace('T', ' ')} UTC · {entry.run.procedureCode} rev{' '}
                  {entry.run.procedureRevision}
                </td>
                <td className="devices">{entry.run.sheetPdfPath ?? '—'}</td>
              </tr>
            ),
          )}
        </tbody>
      </table>
    </div>
  );
}
