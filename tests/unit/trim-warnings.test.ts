// Live warnings that describe the present (issue 7): the WarningTracker against readings built for
// each case, with the null and the safe end's levels known by construction.

import { describe, expect, it } from 'vitest';
import type { Reading } from '../../shared/measurement/reading.ts';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { assessTrim } from '../../shared/trim/assessment.ts';
import { adviseTrim } from '../../shared/trim/trim-assistant.ts';
import { WarningTracker, type WarningChange } from '../../shared/trim/warning-tracker.ts';

const trim = DEMO_PROCEDURE.trim; // 14 Hz, 0–10 turns, step 0.25, lf rise 20 dB (invented demo values)
const NULL_AT = 5;
const db = (ratio: number) => 20 * Math.log10(ratio);

/** A reading whose H3 lies on a construction with its null at 5.00 turns and −75 dBc deep. */
function reading(position: number, extra: { lf?: number; thdDb?: number; frequencyHz?: number; levelDbfs?: number; flags?: Reading['flags'] } = {}): Reading {
  const re = 0.002 * (position - NULL_AT);
  const im = 10 ** (-75 / 20);
  const h3 = { order: 3, frequencyHz: 42, levelDbc: db(Math.hypot(re, im)), phaseDeg: (Math.atan2(im, re) * 180) / Math.PI };
  return {
    mode: 'coherent',
    fundamental: { frequencyHz: extra.frequencyHz ?? 14, levelDbfs: extra.levelDbfs ?? -12, phaseDeg: 0 },
    measuredFundamentalHz: extra.frequencyHz ?? 14,
    harmonics: [h3],
    harmonicsAboveNyquist: [],
    thdPercent: 0,
    thdDb: extra.thdDb ?? h3.levelDbc,
    thdnPercent: 0,
    thdnDb: -70,
    sinadDb: 70,
    enob: 11,
    noiseDbfs: -110,
    noiseAWeightedDbfs: -112,
    hum: null,
    humSearch: null,
    bandHz: { lowHz: 20, highHz: 20000 },
    mainsCoincidentOrders: [],
    flags: extra.flags ?? [],
    sequence: 1,
    sampleRateHz: 48000,
    frameSize: 65536,
    discontinuities: 0,
    settled: true,
    settleProgress: 1,
    settleRemainingS: 0,
    subAudioDbfs: extra.lf ?? -100,
  } as Reading;
}

const recorded = (positions: number[]) => positions.map((position) => ({ position, reading: reading(position), inFit: true }));

describe('WarningTracker', () => {
  it('judges past-null at the position typed now and clears it as soon as the trimmer is back', () => {
    const points = recorded([0, 1, 4, 4.5, 5.25, 4.9]);
    const tracker = new WarningTracker(trim);
    const at7 = tracker.update({ position: 7, reading: reading(7), points, stimulusHz: 14 });
    expect(at7.active.map((w) => w.id)).toContain('past-null');
    expect(at7.changes).toEqual([expect.objectContaining({ id: 'past-null', change: 'raised', position: 7 })]);
    const back = tracker.update({ position: 4.9, reading: reading(4.9), points, stimulusHz: 14 });
    expect(back.active.map((w) => w.id)).not.toContain('past-null');
    expect(back.changes).toEqual([expect.objectContaining({ id: 'past-null', change: 'cleared', position: 4.9 })]);
  });

  it('clears past-null on the move itself, before the meter has a new frame, without counting the old reading again', () => {
    const points = recorded([0, 1, 4]).map((p, i) => (i === 0 ? { ...p, reading: reading(0, { lf: -100 }) } : p));
    const tracker = new WarningTracker(trim);
    // At 7 turns the sub-audio is far up (an oscillating stage): both warnings are raised.
    let update = tracker.update({ position: 7, reading: reading(7, { lf: -30 }), points, stimulusHz: 14 });
    for (let i = 0; i < 6; i++) update = tracker.update({ position: 7, reading: reading(7, { lf: -30 }), points, stimulusHz: 14 });
    expect(update.active.map((w) => w.id)).toEqual(expect.arrayContaining(['past-null', 'lf-instability']));
    // Back to 4.9 with no new frame yet (the last reading is repeated): past-null goes at once (the
    // construction's null is at 5.00), the sub-audio warning waits for readings taken at 4.9.
    for (let i = 0; i < 30; i++) update = tracker.update({ position: 4.9, reading: reading(7, { lf: -30 }), points, stimulusHz: 14, newReading: false });
    expect(update.active.map((w) => w.id)).toEqual(['lf-instability']);
  });

  it('says the stage is recovering, not that instability is starting, while the sub-audio level dies away', () => {
    const points = recorded([0, 1, 4]).map((p, i) => (i === 0 ? { ...p, reading: reading(0, { lf: -100 }) } : p));
    const tracker = new WarningTracker(trim);
    // Construction: 3 s at 30 dB above the safe end (over the procedure's 20 dB rise), then back at
    // 4.5 turns the level decays by 2 dB a second, at six readings a second.
    for (let i = 0; i < 18; i++) tracker.update({ position: 4.5, reading: reading(4.5, { lf: -70 }), points, stimulusHz: 14 });
    let active: ReturnType<WarningTracker['update']>['active'] = [];
    for (let i = 0; i < 24; i++) active = tracker.update({ position: 4.5, reading: reading(4.5, { lf: -70 - (2 * i) / 6 }), points, stimulusHz: 14 }).active;
    const lf = active.find((w) => w.id === 'lf-instability')!;
    expect(lf.seen).toMatch(/falling back/);
    expect(lf.advice).toMatch(/recovering/);
    expect(lf.advice).not.toMatch(/starting/);
  });

  it('does not flicker while the sub-audio level hovers about its threshold, and clears once it has fallen', () => {
    const points = recorded([0, 1, 4]).map((p, i) => (i === 0 ? { ...p, reading: reading(0, { lf: -100 }) } : p));
    const tracker = new WarningTracker(trim);
    const changes: WarningChange[] = [];
    // Two seconds 23 dB up (over the procedure's 20 dB rise), then thirty seconds swinging 16.5–21.5 dB up,
    // across the threshold again and again, at six readings a second.
    for (let i = 0; i < 192; i++) {
      const lf = -100 + (i < 12 ? 23 : 19 + 2.5 * Math.sin(i * 1.3));
      changes.push(...tracker.update({ position: 4.5, reading: reading(4.5, { lf }), points, stimulusHz: 14 }).changes);
    }
    expect(changes.filter((c) => c.id === 'lf-instability').map((c) => c.change)).toEqual(['raised']);
    // Back to the safe end's level: cleared within three seconds, once.
    const after: WarningChange[] = [];
    for (let i = 0; i < 18; i++) after.push(...tracker.update({ position: 4.5, reading: reading(4.5, { lf: -100 }), points, stimulusHz: 14 }).changes);
    expect(after.filter((c) => c.id === 'lf-instability').map((c) => c.change)).toEqual(['cleared']);
  });

  it('says the stage is oscillating, not starting to, when THD is huge and the fundamental is read far off the tone', () => {
    const points = recorded([0, 1, 4]);
    const tracker = new WarningTracker(trim);
    let active: ReturnType<WarningTracker['update']>['active'] = [];
    for (let i = 0; i < 6; i++) active = tracker.update({ position: 7, reading: reading(7, { lf: -30, thdDb: -4, frequencyHz: 10.8 }), points, stimulusHz: 14 }).active;
    const lf = active.find((w) => w.id === 'lf-instability')!;
    expect(lf.seen).toMatch(/oscillating/);
    expect(lf.seen).toMatch(/10\.8 Hz/);
    expect(lf.advice).not.toMatch(/starting/);
  });
});

describe('warning text and unsettled points', () => {
  it("names the safe end's sub-audio level where it says the safe end's", () => {
    // Construction: safe end −84.5 dBFS, now −22.7 dBFS: 61.8 dB above it.
    const base = { phaseDeg: 0, gainDb: -12 };
    const advice = adviseTrim(
      [
        { ...base, position: 0, levelDbc: -40, lfDbfs: -84.5 },
        { ...base, position: 1, levelDbc: -42, lfDbfs: -22.7 },
      ],
      { lfRiseDb: 20 },
    );
    const lf = advice.warnings.find((w) => w.id === 'lf-instability')!;
    expect(lf.seen).toMatch(/61\.8 dB above the safe end's \(-84\.5 dBFS\)/);
  });

  it('leaves points marked not in the fit out of the fit and the warnings', () => {
    const points = [...recorded([0, 1, 4, 4.75]), { position: 8, reading: reading(8, { lf: -20 }), inFit: false }];
    const assessment = assessTrim(points, trim);
    expect(assessment.warnings.map((w) => w.id)).not.toContain('past-null');
    expect(assessment.warnings.map((w) => w.id)).not.toContain('lf-instability');
    expect(assessment.side).toBe('short-of-null');
    // The construction's null, from the points in the fit.
    expect(Math.abs(assessment.nullPosition! - NULL_AT)).toBeLessThan(0.05);
  });

  it('an assessment with a fit problem carries no numbers', () => {
    const flat = [0, 1, 2].map((position) => ({ position, reading: { ...reading(0), harmonics: [{ order: 3, frequencyHz: 42, levelDbc: -48, phaseDeg: 10 }] } as Reading, inFit: true }));
    const assessment = assessTrim(flat, trim);
    expect(assessment.fitProblem).toMatch(/barely change/);
    expect([assessment.nullPosition, assessment.nullPositionPlusMinus, assessment.nullLevelDbc, assessment.recommendedPosition, assessment.thermalMarginC]).toEqual([null, null, null, null, null]);
    expect(assessment.curve).toEqual([]);
  });
});
