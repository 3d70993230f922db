// A procedure step in words: what it asks for and its limits, written the same way on the unit
// sheet and in the procedures view. Limits are inclusive (docs/procedures.md), so a bound is
// written ≤ or ≥, and a two-sided limit as a range.

import { compactNumber, fixed, withPrefix } from '../format.ts';
import { signedFixed } from '../levels.ts';
import type { Limit, ProcedureStep } from './procedure-file.ts';

const QUANTITY_LABELS: Record<string, string> = {
  thdDb: 'THD',
  thdnDb: 'THD+N',
  gainDb: 'Gain',
  noiseDbu: 'Noise',
  humDbu: 'Hum',
  balanceDb: 'Balance',
  crosstalkDb: 'Crosstalk',
  ringFrequencyHz: 'Ringing frequency',
  dampingRatio: 'Damping ratio',
  overshootPercent: 'Overshoot',
  settlingTimeS: 'Settling time',
  maxLevelDbu: 'Max level',
  maskMarginDb: 'Mask margin',
};

/** A measured quantity's name on the page: "thdDb" → "THD", "harmonicsDbc.H3" → "H3". */
export function quantityLabel(quantity: string): string {
  if (quantity.startsWith('harmonicsDbc.')) return quantity.slice('harmonicsDbc.'.length);
  return QUANTITY_LABELS[quantity] ?? quantity;
}

/** Gain and balance limits and a response's margin inside its mask are fractions of a dB, a damping ratio a fraction of 1: they need the hundredths. */
export const quantityDecimals = (quantity: string): number => (quantity === 'gainDb' || quantity === 'balanceDb' || quantity === 'maskMarginDb' || quantity === 'dampingRatio' ? 2 : 1);

/** Units whose values span decades (µs to ms, kHz to MHz): written with an SI prefix, not a sign. */
const PREFIXED_UNITS = new Set(['s', 'Hz']);

/** Quantities that are never negative (times, frequencies, percentages, ratios): written without a sign. */
export const isUnsignedUnit = (unit: string): boolean => PREFIXED_UNITS.has(unit) || unit === '%' || unit === 'ratio';

/** A value in its unit: "−52.0 dB", "0.45 ratio", "12.3 µs", "215 kHz". */
export function valueText(value: number, unit: string, decimals: number): string {
  if (PREFIXED_UNITS.has(unit)) return withPrefix(value, unit);
  if (unit === '%' || unit === 'ratio') return `${fixed(value, decimals)}${unit === '%' ? ' %' : ''}`;
  return `${signedFixed(value, decimals)} ${unit}`;
}

/** "≤ −50.0 dB", "≥ 3.0 dB", "−0.50 to +0.50 dB". */
export function limitText(limit: { low: number | null; high: number | null; unit: string }, decimals: number): string {
  // Without a sign the unit goes once, at the end, as a signed range writes it.
  const f = (v: number) => (PREFIXED_UNITS.has(limit.unit) ? withPrefix(v, limit.unit) : limit.unit === '%' || limit.unit === 'ratio' ? fixed(v, decimals) : signedFixed(v, decimals));
  const unit = PREFIXED_UNITS.has(limit.unit) || limit.unit === 'ratio' ? '' : ` ${limit.unit}`;
  if (limit.low !== null && limit.high !== null) return `${f(limit.low)} to ${f(limit.high)}${unit}`;
  if (limit.high !== null) return `≤ ${f(limit.high)}${unit}`;
  if (limit.low !== null) return `≥ ${f(limit.low)}${unit}`;
  return 'no limit';
}

export const hzText = (value: number): string =>
  value >= 1000 ? `${fixed(value / 1000, value % 1000 === 0 ? 0 : 2)} kHz` : `${fixed(value, value < 100 && !Number.isInteger(value) ? 2 : 0)} Hz`;

const ordinal = (n: number) => `${n}${n % 10 === 1 && n !== 11 ? 'st' : n % 10 === 2 && n !== 12 ? 'nd' : n % 10 === 3 && n !== 13 ? 'rd' : 'th'}`;

/** What the step asks for, in one line: its frequency and level, the generator off, the band. */
export function stepConditions(step: ProcedureStep): string {
  switch (step.kind) {
    case 'notice':
      return `Acknowledged: “${step.acknowledgement}”`;
    case 'trim':
      return `${hzText(step.stimulusHz)} at ${signedFixed(step.stimulusLevelDbfs, 1)} dBFS`;
    case 'distortion':
    case 'gain':
      return `${hzText(step.frequencyHz)} at ${signedFixed(step.level.value, 1)} ${step.level.unit}`;
    case 'balance':
    case 'crosstalk':
      return `channels ${step.channels[0]} and ${step.channels[1]}, ${hzText(step.frequencyHz)} at ${signedFixed(step.level.value, 1)} ${step.level.unit}`;
    case 'noise':
      return `generator off; ${step.weighting === 'A' ? 'A-weighted' : 'unweighted'}, ${hzText(step.band.lowHz)} to ${hzText(step.band.highHz)}`;
    case 'hum':
      return `generator off; mains${step.mainsHarmonics > 1 ? ` and harmonics to the ${ordinal(step.mainsHarmonics)}` : ' fundamental'}`;
    case 'ringing':
      return `square wave ${hzText(step.squareHz)} at ${signedFixed(step.level.value, 1)} ${step.level.unit}; oscilloscope record, voltage column ${step.channel}`;
    case 'max-level':
      return `${hzText(step.frequencyHz)} rising from ${signedFixed(step.startLevel.value, 1)} to at most ${signedFixed(step.ceiling.value, 1)} ${step.ceiling.unit} in ${compactNumber(step.stepDb)} dB steps, until THD+N reaches ${compactNumber(step.thdnThresholdPercent)} %`;
    case 'response':
      return `sweep ${hzText(step.fromHz)} to ${hzText(step.toHz)} in ${fixed(step.durationS, 1)} s at ${signedFixed(step.level.value, 1)} ${step.level.unit}; 0 dB at ${hzText(step.referenceHz)}`;
  }
}

/** A response mask in words: "20 Hz −0.5/+0.5 dB, 1 kHz …". */
function maskText(mask: Extract<ProcedureStep, { kind: 'response' }>['mask']): string {
  const f = (v: number) => signedFixed(v, 1);
  const bounds = (low: number | undefined, high: number | undefined) =>
    low !== undefined && high !== undefined ? `${f(low)} to ${f(high)} dB` : low !== undefined ? `≥ ${f(low)} dB` : `≤ ${f(high as number)} dB`;
  return mask.map((p) => `${hzText(p.frequencyHz)} ${bounds(p.lowDb, p.highDb)}`).join(', ');
}

/** Everything else the step sets, for the procedures view: the trim's parameters, a check's termination. */
export function stepDetails(step: ProcedureStep): string[] {
  switch (step.kind) {
    case 'trim':
      return [
        step.expectedLevelDbfs ? `reading expected between ${signedFixed(step.expectedLevelDbfs.low, 1)} and ${signedFixed(step.expectedLevelDbfs.high, 1)} dBFS` : 'no expected level window',
        `frequency within ${fixed(step.frequencyTolerancePercent, 1)} %`,
        `trimmer ${fixed(step.positionMin, 2)} to ${fixed(step.positionMax, 2)} ${step.positionUnit} in steps of ${fixed(step.positionStep, 2)}`,
        `trims H${step.harmonicOrder}; recommendation within ${fixed(step.marginDb, 1)} dB of the null`,
        `warns at a gain rise of ${fixed(step.gainRiseDb, 1)} dB or a sub-audio rise of ${fixed(step.lfRiseDb, 1)} dB`,
      ];
    case 'noise':
    case 'hum':
      return [step.inputTermination];
    case 'max-level':
      return ['loud: stops at once if the station\'s input clips; Esc stops it and mutes the generator'];
    case 'response':
      return [`mask ${maskText(step.mask)}, linear in log frequency between its points`];
    default:
      return [];
  }
}

/** The step's limits, each with its quantity's name, in the order the file gives them. */
export function stepLimits(step: ProcedureStep): { quantity: string; label: string; text: string }[] {
  const entry = (quantity: string, limit: Limit) => ({
    quantity,
    label: quantityLabel(quantity),
    text: limitText({ low: limit.low ?? null, high: limit.high ?? null, unit: limit.unit }, quantityDecimals(quantity)),
  });
  switch (step.kind) {
    case 'notice':
      return [];
    case 'trim':
      return [{ quantity: 'limitThdDb', label: 'THD', text: `≤ ${signedFixed(step.limitThdDb, 1)} dB at the final trim point` }];
    case 'distortion': {
      const { thdDb, thdnDb, harmonicsDbc } = step.limits;
      return [
        ...(thdDb ? [entry('thdDb', thdDb)] : []),
        ...(thdnDb ? [entry('thdnDb', thdnDb)] : []),
        ...Object.entries(harmonicsDbc ?? {}).flatMap(([name, limit]) => (limit ? [entry(`harmonicsDbc.${name}`, limit)] : [])),
      ];
    }
    case 'response':
      return [
        { quantity: 'maskMarginDb', label: quantityLabel('maskMarginDb'), text: `${limitText({ low: 0, high: null, unit: 'dB' }, quantityDecimals('maskMarginDb'))} inside the mask over its span` },
        ...Object.entries(step.limits?.harmonicsDbc ?? {}).flatMap(([name, limit]) => (limit ? [{ ...entry(`harmonicsDbc.${name}`, limit), text: `${entry(`harmonicsDbc.${name}`, limit).text} over the band` }] : [])),
      ];
    default:
      return Object.entries(step.limits).map(([quantity, limit]) => entry(quantity, limit as Limit));
  }
}
