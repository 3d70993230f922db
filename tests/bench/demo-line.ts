// How fast the headless demo line runs (not a test): simulated MG-20 units walked through the whole
// demo procedure and written into a fresh station database, on the one thread Node gives it.
//   node tests/bench/demo-line.ts [units] [seed]

import { runDemoLine } from '../../cli/demo-line.ts';
import { tempDir } from '../support/station.ts';

const [units = 20, seed = 1] = process.argv.slice(2).map(Number);
const folder = tempDir('trimbench-line-bench-');
try {
  const started = performance.now();
  const cpuStarted = process.cpuUsage();
  const report = await runDemoLine({ units, seed, dataDir: folder.path });
  const seconds = (performance.now() - started) / 1000;
  const cpu = process.cpuUsage(cpuStarted);
  console.log(
    [
      `units                 ${units} (seed ${seed}): ${report.passed} passed, ${report.failed} failed`,
      `wall time             ${seconds.toFixed(1)} s, ${((1000 * seconds) / units).toFixed(0)} ms a unit`,
      `processor time        ${((cpu.user + cpu.system) / 1e6).toFixed(1)} s (one thread: simulation, meter and database alike)`,
      `units a minute        ${((60 * units) / seconds).toFixed(1)} by the clock, ${((60 * units * 1e6) / (cpu.user + cpu.system)).toFixed(1)} per minute of processor time (target: at least 20 on one core)`,
    ].join('\n'),
  );
} finally {
  folder.remove();
}
