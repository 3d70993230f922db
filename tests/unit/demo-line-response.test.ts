// The headless demo line walks a response step as the page does: the sweep played once through the
// simulated stage, its whole answer sent to main. The stage's response is its small-signal circuit
// by Kirchhoff's voltage law (any circuits textbook): H = Zp / (R0 + Zc + Zp), Zc = Rd ∥ 1/(jωC),
// Zp = jωL ∥ RL, from the demo unit's invented parameters, with the trimmer at its safe end (0 turns).

import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterEach, beforeEach, expect, it } from 'vitest';
import { openStation } from '../../electron/services/station.ts';
import type { RunDetail } from '../../shared/ipc/contract.ts';
import { walkUnit, LineCallRefused, type LineCalls } from '../../shared/procedures/demo-line.ts';
import { DEMO_UNIT_PARAMETERS as P } from '../../shared/sim/demo-unit.ts';
import { dispatch } from '../../electron/services/handlers.ts';
import { accepted, noCaller, tempDir, TEST_SETUP } from '../support/station.ts';
import { stageDb as circuitDb } from '../support/demo-physics.ts';

/** The stage at the trimmer's safe end: the whole series resistance R_w + R_s in the loop. */
const stageDb = (f: number) => circuitDb(P, P.windingOhms + P.sourceOhms, f);

const trimStep = JSON.parse(readFileSync(fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url)), 'utf8')).steps.find((s: { kind: string }) => s.kind === 'trim');
const PROCEDURE = {
  schemaVersion: 2,
  code: 'RESP-LINE',
  revision: 'A',
  title: 'Response on the demo line (invented)',
  invented: true,
  model: { code: 'MG-20', name: 'Invented stage', maker: 'Invented', channels: 1 },
  serial: { pattern: '^MG20-\\d{4}-\\d{4}$', example: 'MG20-2611-0001' },
  requiresCalibration: false,
  steps: [
    { id: 'safety', title: 'Safety', kind: 'notice', instructions: ['Mute monitors.'], acknowledgement: 'Monitors are muted.' },
    {
      id: 'response',
      title: 'Frequency response',
      kind: 'response',
      instructions: ['The sweep plays once.'],
      fromHz: 10,
      toHz: 20000,
      durationS: 13.2, // 12 cycles of 10 Hz before H2 (docs/procedures.md): 12/10/ln 2 × ln 2000 = 13.16 s
      level: { value: -20, unit: 'dBFS' },
      referenceHz: 1000,
      // Tighter than the stage at 10 Hz (−0.31 dB there): the step fails and stops the walk.
      mask: [
        { frequencyHz: 10, lowDb: -0.2 },
        { frequencyHz: 20000, lowDb: -0.2 },
      ],
      onFail: 'stop',
    },
    trimStep,
  ],
};

let dir: ReturnType<typeof tempDir>;
let station: ReturnType<typeof openStation>;
beforeEach(() => {
  dir = tempDir('trimbench-line-response-');
  station = openStation({ dataDir: dir.path, stationName: 'line-1', log: { record: () => '' } });
});
afterEach(() => {
  station.close();
  dir.remove();
});

it('plays the sweep through the simulated stage and main finds the response the circuit gives', async () => {
  const path = join(dir.path, 'line.json');
  writeFileSync(path, JSON.stringify(PROCEDURE));
  const { id } = await accepted<{ id: number }>(station.handlers, 'importProcedure', {}, { ...noCaller, chooseProcedureFile: async () => path });
  const opened = await accepted<RunDetail>(station.handlers, 'openRun', { serial: 'MG20-2611-0400', procedureId: id, operator: 'Line', setup: TEST_SETUP });
  const call: LineCalls = async (channel, request) => {
    const result = await dispatch(station.handlers, channel, request, noCaller);
    if (!result.ok) throw new LineCallRefused(channel, result.error.message);
    return result.value as never;
  };
  const unit = { index: 0, parameters: P, noiseSeed: 3, trueNullTurns: 5, fault: null } as unknown as Parameters<typeof walkUnit>[0];
  const finished = await walkUnit(unit, opened, call, { sampleRateHz: 48000, mainsHz: 50, levels: { outputDbuAtFullScale: 18, inputDbuAtFullScale: 18 }, setup: TEST_SETUP, scopeFile: null });
  expect(finished.run.verdict).toBe('fail');
  const result = finished.stepResults.find((r) => r.stepId === 'response')!;
  for (const f of [10, 20, 100, 5000]) {
    const [fHz, db] = result.curve!.response.reduce((a, b) => (Math.abs(Math.log(b[0] / f)) < Math.abs(Math.log(a[0] / f)) ? b : a));
    expect(Math.abs(db - (stageDb(fHz) - stageDb(1000)))).toBeLessThan(0.1);
  }
  const margin = result.measurements.find((m) => m.quantity === 'maskMarginDb')!;
  expect(Math.abs(margin.value! - (stageDb(10) - stageDb(1000) + 0.2))).toBeLessThan(0.05);
}, 120_000);
