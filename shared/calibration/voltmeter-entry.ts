// What a technician types from a true-RMS voltmeter during level calibration, and the arithmetic
// that turns those readings into a channel's dBu at 0 dBFS (see shared/levels.ts).
//
// Entries: a plain decimal and a unit, V, mV, dBu or dBV ("1.228 V", "775mV", "+4 dBu", "-10 dBV").
// - A decimal point only. "1,228 V" is 1.228 V in much of Europe and 1228 V where the comma
//   groups thousands; that factor of 1000 is exactly the mistake calibration must catch, so it is
//   refused and the message says to type a point.
// - Units are read case-insensitively where that is unambiguous (v, dbu, DBV …). "MV" and "Mv" are
//   refused: a capital M is the SI prefix mega, and although megavolts make no sense on a bench,
//   guessing "millivolts" would silently pick one of two readings a factor of 10⁹ apart.
// - A bare number is refused: "0.775" could be volts or dBu, 2.2 dB apart from +4 dBu only by luck.

import { dbuFromDbv, dbuFromVrms, signedFixed, vRmsFromDbu } from '../levels.ts';
import { FLOOR_DB } from '../measurement/reading.ts';

export type VoltmeterUnit = 'V' | 'mV' | 'dBu' | 'dBV';

export type VoltmeterEntry =
  | { ok: true; dbu: number; vRms: number; value: number; unit: VoltmeterUnit; entered: string }
  | { ok: false; message: string };

/** What a bench true-RMS voltmeter can show: its top AC range is about 750–1000 V, its floor some µV (common practice, from memory). */
export const VOLTMETER_MIN_VRMS = 1e-6;
export const VOLTMETER_MAX_VRMS = 1000;

const EXAMPLES = 'such as 1.228 V, 775 mV, +4 dBu or -10 dBV';
const NUMBER = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)$/;
const UNITS: Record<string, VoltmeterUnit> = { v: 'V', mv: 'mV', dbu: 'dBu', dbv: 'dBV' };

/** Reads one voltmeter entry. Never throws: a refusal carries a short message saying what to type. */
export function parseVoltmeterEntry(text: string): VoltmeterEntry {
  // A typographic minus (U+2212) is what this app prints, so it may well be pasted back.
  const trimmed = text.trim().replace(/\u2212/g, '-');
  if (trimmed === '') return { ok: false, message: `Type the voltmeter reading with its unit, ${EXAMPLES}.` };
  const match = /^([^a-zA-Zµ]*?)\s*([a-zA-Zµ][a-zA-Zµ ]*)?$/.exec(trimmed);
  const numberText = match ? match[1].trim() : trimmed;
  const unitText = match?.[2]?.replace(/\s+/g, '') ?? '';
  if (numberText.includes(',')) {
    return { ok: false, message: `“${text.trim()}”: use a decimal point, not a comma (type ${numberText.replace(/,/g, '.')} ${unitText || 'V'}).` };
  }
  if (!match || !NUMBER.test(numberText)) {
    return { ok: false, message: `“${text.trim()}” is not a reading; type a number and a unit, ${EXAMPLES}.` };
  }
  if (unitText === '') return { ok: false, message: `“${text.trim()}” has no unit; add V, mV, dBu or dBV, ${EXAMPLES}.` };
  if (/^M[vV](?:rms|RMS|ac|AC)?$/.test(unitText)) {
    return { ok: false, message: `“${text.trim()}”: MV means megavolts; type mV for millivolts or V for volts.` };
  }
  // Meters label their readings "V AC" or "mV RMS"; the suffix says nothing more here.
  const lower = unitText.toLowerCase().replace(/^(m?v)(?:rms|ac)$/, '$1');
  if (lower === 'dbm') {
    return { ok: false, message: `“${text.trim()}”: dBm is a power level; type the meter's dBu or volts reading instead.` };
  }
  const unit = UNITS[lower];
  if (!unit) return { ok: false, message: `“${text.trim()}”: unknown unit “${unitText}”; use V, mV, dBu or dBV.` };
  const value = Number(numberText);
  let dbu: number;
  if (unit === 'V' || unit === 'mV') {
    if (value <= 0) return { ok: false, message: `“${text.trim()}”: an RMS voltage is above 0; type the reading as the meter shows it.` };
    dbu = dbuFromVrms(unit === 'V' ? value : value / 1000);
  } else {
    dbu = unit === 'dBu' ? value : dbuFromDbv(value);
  }
  const vRms = vRmsFromDbu(dbu);
  if (!(vRms >= VOLTMETER_MIN_VRMS && vRms <= VOLTMETER_MAX_VRMS)) {
    return { ok: false, message: `“${text.trim()}” is outside what a bench voltmeter reads (1 µV to 1000 V); check the number and the unit.` };
  }
  return { ok: true, dbu, vRms, value, unit, entered: `${numberText} ${unit}` };
}

/**
 * dBu at 0 dBFS that an audio interface can plausibly have: pro interfaces put full scale at about
 * +18 to +24 dBu, consumer ones near +2 dBV (≈ +4 dBu), and some converters reach about +28 dBu;
 * −20 … +30 dBu leaves room on both sides (common practice, from memory).
 */
export const PLAUSIBLE_DBU_AT_FULL_SCALE = { min: -20, max: 30 } as const;

/** The reference tone's level must leave the meter a clear reading and the output clear of clipping. */
export const REFERENCE_DBFS_RANGE = { min: -40, max: 0 } as const;

export type CalibrationResult =
  | { ok: true; dbuAtFullScale: number; note: string | null }
  | { ok: false; dbuAtFullScale: number | null; message: string };

const fmt = (dbu: number) => `${signedFixed(dbu, 1)} dBu`;
const RANGE_TEXT = `${fmt(PLAUSIBLE_DBU_AT_FULL_SCALE.min)} to ${fmt(PLAUSIBLE_DBU_AT_FULL_SCALE.max)}`;

// 10× is 20 dB (a meter range or a decimal point off by one place), 1000× is 60 dB (mV read as V).
const FACTOR_SHIFTS = [
  { db: 20, words: '10 times' },
  { db: 60, words: '1000 times' },
] as const;

/** When `dbuAtFullScale` moved by 10× or 1000× would satisfy `inRange`, the words for it, else null. */
function factorAway(dbuAtFullScale: number, inRange: (dbu: number) => boolean): string | null {
  for (const shift of FACTOR_SHIFTS) {
    if (inRange(dbuAtFullScale - shift.db)) return `${shift.words} too high`;
    if (inRange(dbuAtFullScale + shift.db)) return `${shift.words} too low`;
  }
  return null;
}

function meterAdvice(direction: string, what: string): string {
  const advice = direction.startsWith('1000')
    ? 'check whether the meter shows mV or V and type that unit'
    : "check the meter's range and the decimal point";
  return `${what} looks ${direction}; ${advice}.`;
}

/**
 * Checks a channel's dBu at 0 dBFS against the plausible range and, when known, against the level
 * expected (the interface's spec or the last calibration). `source` names where it came from.
 */
export function checkDbuAtFullScale(dbuAtFullScale: number, expectedDbuAtFullScale: number | null, source: string): CalibrationResult {
  const plausible = (dbu: number) => dbu >= PLAUSIBLE_DBU_AT_FULL_SCALE.min && dbu <= PLAUSIBLE_DBU_AT_FULL_SCALE.max;
  const figure = `${fmt(dbuAtFullScale)} at 0 dBFS`;
  if (!Number.isFinite(dbuAtFullScale)) return { ok: false, dbuAtFullScale: null, message: `${source} gives no usable level; repeat the reading.` };
  if (!plausible(dbuAtFullScale)) {
    const direction = factorAway(dbuAtFullScale, plausible);
    const why = `${source} gives ${figure}, outside the ${RANGE_TEXT} of audio interfaces`;
    return { ok: false, dbuAtFullScale, message: direction ? `${why}. ${meterAdvice(direction, 'The reading')}` : `${why}; check the reading and the unit.` };
  }
  if (expectedDbuAtFullScale !== null) {
    const near = (dbu: number) => Math.abs(dbu - expectedDbuAtFullScale) <= 3;
    if (!near(dbuAtFullScale)) {
      const direction = factorAway(dbuAtFullScale, near);
      const why = `${source} gives ${figure}, ${signedFixed(dbuAtFullScale - expectedDbuAtFullScale, 1)} dB from the expected ${fmt(expectedDbuAtFullScale)}`;
      // A factor of 10 or 1000 off what is expected is a meter mistake, not an interface: refused.
      if (direction) return { ok: false, dbuAtFullScale, message: `${why}. ${meterAdvice(direction, 'The reading')}` };
      return { ok: true, dbuAtFullScale, note: `${why}; check the interface's level controls and pads before relying on it.` };
    }
  }
  return { ok: true, dbuAtFullScale, note: null };
}

function checkReferenceDbfs(referenceDbfs: number): void {
  // The station chooses the reference level; one outside the range is a programming error.
  if (!(referenceDbfs >= REFERENCE_DBFS_RANGE.min && referenceDbfs <= REFERENCE_DBFS_RANGE.max)) {
    throw new RangeError(`reference level ${referenceDbfs} dBFS lies outside ${REFERENCE_DBFS_RANGE.min} to ${REFERENCE_DBFS_RANGE.max} dBFS`);
  }
}

/**
 * Output calibration: the station plays a 1 kHz sine at `referenceDbfs`; the technician types what
 * the voltmeter shows across the output terminals. dBu at 0 dBFS out = reading (dBu) − reference (dBFS).
 */
export function outputCalibrationFromReading(
  referenceDbfs: number,
  readingText: string,
  expectedDbuAtFullScale: number | null = null,
): CalibrationResult {
  checkReferenceDbfs(referenceDbfs);
  const reading = parseVoltmeterEntry(readingText);
  if (!reading.ok) return { ok: false, dbuAtFullScale: null, message: reading.message };
  return checkDbuAtFullScale(reading.dbu - referenceDbfs, expectedDbuAtFullScale, `A reading of ${reading.entered} at ${signedFixed(referenceDbfs, 1)} dBFS`);
}

/** The loop's captured tone must stand clear of the noise and of clipping to calibrate by. */
export const CAPTURED_DBFS_RANGE = { min: -60, max: -0.5 } as const;

/**
 * Input calibration by loopback: the calibrated output plays `generatorDbfs`, so the input sees
 * generatorDbfs + outputDbuAtFullScale dBu, and reads it as `capturedDbfs`.
 * dBu at 0 dBFS in = generatorDbfs + outputDbuAtFullScale − capturedDbfs.
 */
export function inputCalibrationFromLoopback({
  outputDbuAtFullScale,
  generatorDbfs,
  capturedDbfs,
  expectedDbuAtFullScale = null,
}: {
  outputDbuAtFullScale: number;
  generatorDbfs: number;
  capturedDbfs: number;
  expectedDbuAtFullScale?: number | null;
}): CalibrationResult {
  checkReferenceDbfs(generatorDbfs);
  if (capturedDbfs <= FLOOR_DB || capturedDbfs < CAPTURED_DBFS_RANGE.min) {
    return { ok: false, dbuAtFullScale: null, message: `The input reads the tone at ${signedFixed(Math.max(capturedDbfs, FLOOR_DB), 1)} dBFS, too low to calibrate by; check the loop cable and the input channel.` };
  }
  if (capturedDbfs > CAPTURED_DBFS_RANGE.max) {
    return { ok: false, dbuAtFullScale: null, message: `The input reads the tone at ${signedFixed(capturedDbfs, 1)} dBFS, at or near clipping; lower the generator level or the input gain and repeat.` };
  }
  return checkDbuAtFullScale(generatorDbfs + outputDbuAtFullScale - capturedDbfs, expectedDbuAtFullScale, 'The loopback');
}

/** Input calibration for an interface with a fixed input: its stated level for 0 dBFS, typed as a voltmeter entry. */
export function inputCalibrationFromSpec(specText: string): CalibrationResult {
  const spec = parseVoltmeterEntry(specText);
  if (!spec.ok) return { ok: false, dbuAtFullScale: null, message: spec.message };
  return checkDbuAtFullScale(spec.dbu, null, `The stated level ${spec.entered}`);
}
