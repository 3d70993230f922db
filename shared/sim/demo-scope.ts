// What a bench oscilloscope across the demo unit's dummy load exports while the unit is driven by a
// square wave: the invented unit's high-frequency second-order behaviour (demo-unit.ts,
// hfNaturalHz and hfDampingRatio) answering the square's edges, captured by an invented 8-bit scope
// and written as CSV text. Everything here is invented for the demo scenario; the audio path cannot
// show this ringing, which is why the ringing step reads a scope record (procedures/ringing.ts).

import { GaussianNoise, mulberry32 } from '../dsp/seeded-noise.ts';
import { vRmsFromDbu } from '../levels.ts';
import { scopeCsvText } from '../scope/scope-csv-text.ts';
import type { DemoUnitParameters } from './demo-unit.ts';
import { scopeView, squareWaveResponse } from './second-order.ts';

/** The invented scope's sample interval: 50 MS/s, over a hundred samples a ringing period of a few hundred kHz. */
export const DEMO_SCOPE_SAMPLE_INTERVAL_S = 20e-9;
/** Periods of the square wave a record holds: a few edges of each polarity. */
const PERIODS = 2.2;

export interface DemoScopeSetting {
  squareHz: number;
  /** The square's flat top as the peak of a sine at this level (docs/procedures.md, `ringing`), dBu at the unit's input. */
  levelDbu: number;
  /** Seed of the scope's noise. */
  seed: number;
}

/**
 * The scope's CSV export of the unit's output, in volts. The unit's gain (its driver's) carries the
 * square to the output; its coupling network's low-frequency tilt over half a period of a 20 kHz
 * square is far under one code of the scope, so only the high-frequency ringing is drawn.
 */
export function demoScopeRecordText(p: Pick<DemoUnitParameters, 'hfNaturalHz' | 'hfDampingRatio' | 'driverGain'>, setting: DemoScopeSetting): string {
  const dt = DEMO_SCOPE_SAMPLE_INTERVAL_S;
  const peakV = p.driverGain * vRmsFromDbu(setting.levelDbu) * Math.SQRT2;
  const samples = Math.round(PERIODS / setting.squareHz / dt);
  const clean = squareWaveResponse({
    system: { zeta: p.hfDampingRatio, naturalHz: p.hfNaturalHz },
    squareHz: setting.squareHz,
    sampleIntervalS: dt,
    samples,
    lowV: -peakV,
    highV: peakV,
    // The scope triggers a little before a rising edge, as a technician sets it.
    firstEdgeS: 0.1 / setting.squareHz,
  });
  const noise = new GaussianNoise(mulberry32(setting.seed));
  const captured = scopeView(clean, () => noise.next());
  return scopeCsvText(0, dt, [captured], {
    preamble: [
      ['Instrument', 'Invented demo oscilloscope (simulated record of an invented MG-20 unit)'],
      ['Record Length', String(samples)],
      ['Sample Interval', dt.toExponential(6)],
      ['Vertical Units', 'V'],
    ],
    header: ['TIME', 'CH1'],
  });
}

/** The example record shipped for practice (resources/demo/): the nominal demo unit at the demo procedure's ringing step, 20 kHz at 0 dBu. */
export const DEMO_EXAMPLE_RECORD = { squareHz: 20_000, levelDbu: 0, seed: 1 } as const satisfies DemoScopeSetting;
