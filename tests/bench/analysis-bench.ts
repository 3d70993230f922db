// Speed and memory of the analysis core (a benchmark that prints figures; not a test).
//
//   npm run bench            readable figures
//   npm run -s bench -- --json   one JSON object
//
// Targets (the measurement-engine issue): full analysis ≤ 1.5× the bare transform; ≥ 10 readings/s
// at ≤ 10 % of one core at 96 kHz stereo; heap growth ≈ 0 over 10 000 analyses.

import FFT from 'fft.js';
import { FrameAnalyzer } from '../../shared/measurement/frame-analyzer.ts';
import { LiveMeter } from '../../shared/measurement/live-meter.ts';
import { MeterSession } from '../../shared/measurement/meter-session.ts';
import { createHarmonicAnalysis } from '../../shared/measurement/reading.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { DemoUnit } from '../../shared/sim/demo-unit.ts';

const FRAME = 65536;
const RATE = 48000;
const json = process.argv.includes('--json');
const log = (text: string) => {
  if (!json) process.stderr.write(`${text}\n`);
};

function testBlock(length: number, rate: number): Float64Array {
  let seed = 1;
  const random = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648) - 0.5;
  return Float64Array.from({ length }, (_, n) => {
    const t = n / rate;
    return (
      0.5 * Math.cos(2 * Math.PI * 997 * t) +
      0.5e-3 * Math.cos(2 * Math.PI * 2991 * t) +
      1e-5 * Math.cos(2 * Math.PI * 50.02 * t) +
      1e-6 * random()
    );
  });
}

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.floor(sorted.length / 2)];
}

/**
 * Median milliseconds per call of each body, timed in alternating rounds so that both see the
 * same machine state (frequency scaling and other load move absolute times a lot on a shared host).
 */
function timeAlternating(rounds: number, calls: number, bodies: (() => void)[]): number[] {
  for (const body of bodies) for (let i = 0; i < calls; i++) body(); // warm up the JIT
  const perCall: number[][] = bodies.map(() => []);
  for (let r = 0; r < rounds; r++) {
    bodies.forEach((body, b) => {
      const start = performance.now();
      for (let i = 0; i < calls; i++) body();
      perCall[b].push((performance.now() - start) / calls);
    });
  }
  return perCall.map(median);
}

const block = testBlock(FRAME, RATE);
const fft = new FFT(FRAME);
const fftOut = new Float64Array(2 * FRAME);
const analyzer = new FrameAnalyzer(FRAME, RATE);
const result = createHarmonicAnalysis();
const [fftMs, analysisMs] = timeAlternating(41, 10, [() => fft.realTransform(fftOut, block), () => analyzer.analyze(block, result)]);
log(`bare fft.js real transform, ${FRAME} points: ${fftMs.toFixed(3)} ms`);
log(`full analysis (window, FFT, fundamental, H2–H10, THD+N, noise, hum, flags): ${analysisMs.toFixed(3)} ms`);
log(`analysis / transform: ${(analysisMs / fftMs).toFixed(2)} (target ≤ 1.5)`);

// Live path at 96 kHz stereo: one meter per channel, 10 readings per second each, 65536-sample frames.
const LIVE_RATE = 96000;
const seconds = 10;
const liveStream = Float32Array.from(testBlock(LIVE_RATE * seconds, LIVE_RATE));
const meters = [0, 1].map(() => new LiveMeter({ sampleRateHz: LIVE_RATE, expectedFundamentalHz: 20, readingsPerSecond: 10 }));
const chunk = 1024;
let readings = 0;
const liveStart = performance.now();
for (let at = 0; at + chunk <= liveStream.length; at += chunk) {
  for (const meter of meters) if (meter.push(liveStream.subarray(at, at + chunk), chunk)) readings++;
}
const liveMs = performance.now() - liveStart;
const readingsPerSecond96kStereo = readings / (liveMs / 1000);
const coreShareAt10PerSecond = liveMs / 1000 / seconds;
log(`96 kHz stereo live meters: ${readings} readings in ${liveMs.toFixed(0)} ms → ${readingsPerSecond96kStereo.toFixed(0)} readings per CPU-second`);
log(`share of one core for 10 readings/s per channel: ${(100 * coreShareAt10PerSecond).toFixed(1)} % (target ≤ 10 %)`);

let heapGrowthBytesPer10k: number | null = null;
const gc = (globalThis as { gc?: () => void }).gc;
if (gc) {
  for (let i = 0; i < 200; i++) analyzer.analyze(block, result);
  gc();
  const before = process.memoryUsage().heapUsed;
  for (let i = 0; i < 10000; i++) analyzer.analyze(block, result);
  gc();
  heapGrowthBytesPer10k = process.memoryUsage().heapUsed - before;
  log(`heap growth over 10 000 analyses: ${heapGrowthBytesPer10k} bytes`);
} else {
  log('heap growth not measured: run with node --expose-gc (npm run bench does)');
}

/**
 * Simulated seconds from the end of a trimmer move to the first settled (recordable) reading: the
 * demo unit and the live meter at 48 kHz, the demo procedure's stimulus, the trimmer turning at
 * its finite rate, the worker's message handling (MeterSession).
 */
function settleAfterMove(fromTurns: number, toTurns: number): number | null {
  const rate = 48000;
  const block = new Float32Array(480);
  const unit = new DemoUnit(rate);
  const { stimulusHz, stimulusLevelDbfs } = DEMO_PROCEDURE.trim;
  unit.setStimulus({ frequencyHz: stimulusHz, levelDbfs: stimulusLevelDbfs, on: true });
  unit.setTrimmer(fromTurns);
  const session = new MeterSession({ expectedFundamentalHz: stimulusHz, harmonicCount: 10, mainsHz: 50, stimulusLocked: false, chainFloorThdDb: null }, { sampleGuard: false });
  let samples = 0;
  for (; samples < 12 * rate; samples += block.length) {
    unit.render(block);
    session.push(block, block.length, rate);
  }
  const moveS = unit.setTrimmer(toTurns);
  session.trimmerMoved(moveS);
  const stopsAt = samples + moveS * rate;
  for (const end = samples + 20 * rate; samples < end; ) {
    unit.render(block);
    samples += block.length;
    if (session.push(block, block.length, rate)?.reading.settled) return (samples - stopsAt) / rate;
  }
  return null;
}
const settleMoves = [
  { fromTurns: 4.5, toTurns: 4.75, where: 'near the null' },
  { fromTurns: 2, toTurns: 2.25, where: 'far from the null' },
  { fromTurns: 0, toTurns: 0.25, where: 'at the safe end' },
  { fromTurns: 5.25, toTurns: 5, where: 'back onto the null' },
].map((move) => ({ ...move, settleS: settleAfterMove(move.fromTurns, move.toTurns) }));
const settleAfterMoveS = settleMoves[0].settleS;
for (const m of settleMoves) log(`settled after a ${m.fromTurns} → ${m.toTurns} turn move (${m.where}): ${m.settleS?.toFixed(2) ?? 'never'} s simulated (target ≤ 3)`);

// The demo unit against real time (it runs live in the worker).
const demo = new DemoUnit(48000);
demo.setStimulus({ frequencyHz: 14, levelDbfs: -12, on: true });
const demoBlock = new Float32Array(4800);
const demoStart = performance.now();
for (let i = 0; i < 100; i++) demo.render(demoBlock); // 10 s of audio
const demoUnitRealTimeFactor = 10 / ((performance.now() - demoStart) / 1000);
log(`demo unit at 48 kHz: ${demoUnitRealTimeFactor.toFixed(1)}× real time`);

if (json) {
  process.stdout.write(
    `${JSON.stringify({
      fftMs,
      analysisMs,
      analysisOverFft: analysisMs / fftMs,
      readingsPerSecond96kStereo,
      coreShareAt10PerSecond,
      heapGrowthBytesPer10k,
      settleAfterMoveS,
      settleMoves,
      demoUnitRealTimeFactor,
      frameSize: FRAME,
      node: process.version,
    })}\n`,
  );
}
