// npm run soak -- --kills N [--seed S] [--max-delay-ms MS] [--json]
// The kill -9 loop of tests/support/soak.ts for as many kills as asked, on a fresh temporary data
// folder (removed afterwards). With --json, prints exactly one line:
// {"kills","confirmedPoints","lostPoints","confirmedSheets","lostSheets","integrityFailures"}.

import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { runSoak } from '../tests/support/soak.ts';

const { values } = parseArgs({
  options: {
    kills: { type: 'string', default: '100' },
    seed: { type: 'string', default: '8' },
    'max-delay-ms': { type: 'string', default: '500' },
    json: { type: 'boolean', default: false },
  },
});

function wholeNumber(name: string, text: string): number {
  if (!/^[0-9]+$/.test(text)) {
    process.stderr.write(`--${name} must be a whole decimal number, not "${text}".\n`);
    process.exit(2);
  }
  return Number(text);
}

const kills = wholeNumber('kills', values.kills);
const seed = wholeNumber('seed', values.seed);
const maxKillDelayMs = wholeNumber('max-delay-ms', values['max-delay-ms']);
const dataDir = mkdtempSync(join(tmpdir(), 'trimbench-soak-'));
try {
  const report = await runSoak({ dataDir, kills, seed, maxKillDelayMs });
  const summary = {
    kills: report.kills,
    confirmedPoints: report.confirmedPoints,
    lostPoints: report.lostPoints,
    confirmedSheets: report.confirmedSheets,
    lostSheets: report.lostSheets,
    integrityFailures: report.integrityFailures,
  };
  if (values.json) process.stdout.write(`${JSON.stringify(summary)}\n`);
  else {
    process.stdout.write(
      `${summary.kills} kills: ${summary.confirmedPoints} points confirmed, ${summary.lostPoints} lost; ` +
        `${report.confirmedFinishes} finishes confirmed, ${report.lostFinishes} lost; ` +
        `${summary.confirmedSheets} sheets confirmed, ${summary.lostSheets} lost; ${summary.integrityFailures} integrity failures.\n`,
    );
  }
  for (const problem of report.problems) process.stderr.write(`${problem}\n`);
  process.exitCode = summary.lostPoints + summary.lostSheets + summary.integrityFailures + report.lostFinishes > 0 ? 1 : 0;
} finally {
  rmSync(dataDir, { recursive: true, force: true });
}
