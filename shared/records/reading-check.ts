// Does a reading agree with itself? Main stores and judges readings the page sends; a reading whose
// settled flag contradicts its own progress, or whose THD is not the sum of its own harmonics, was
// not produced by the meter (or was edited on the way), and a verdict must not rest on it.
// Called through whyNotRecordable, so main and the page apply the same rule.

import { FLOOR_DB, type Reading } from '../measurement/reading.ts';

/** How far a reading's THD may lie from the RSS of its harmonics: rounding, never a real difference. */
export const THD_CONSISTENCY_DB = 0.1;

/** dB of an amplitude ratio, floored as the meter floors every level (so −∞ never appears). */
const flooredDb = (ratio: number) => Math.max(FLOOR_DB, 20 * Math.log10(ratio));

/**
 * Why the reading contradicts itself, or null when it is consistent. THD is the root of the summed
 * harmonic powers relative to the fundamental (THD as a ratio of RMS values, as IEEE 1241 defines
 * it; from memory). A harmonic stored at the floor may have been anything below it, so it
 * widens the accepted range instead of being counted at the floor.
 */
export function whyReadingInconsistent(reading: Reading): string | null {
  if (reading.settled !== reading.settleProgress >= 1) {
    return `The reading says ${reading.settled ? 'settled' : 'not settled'} at ${Math.round(100 * reading.settleProgress)} % settling progress: it was not produced by the meter.`;
  }
  if (reading.settled && reading.settleRemainingS !== null && reading.settleRemainingS !== 0) {
    return `The reading says settled with ${reading.settleRemainingS} s still to wait: it was not produced by the meter.`;
  }
  let knownPower = 0;
  let flooredPower = 0;
  for (const harmonic of reading.harmonics) {
    const power = 10 ** (harmonic.levelDbc / 10);
    if (harmonic.levelDbc <= FLOOR_DB) flooredPower += power;
    else knownPower += power;
  }
  const lowDb = flooredDb(Math.sqrt(knownPower)) - THD_CONSISTENCY_DB;
  const highDb = flooredDb(Math.sqrt(knownPower + flooredPower)) + THD_CONSISTENCY_DB;
  const within = (db: number) => db >= lowDb && db <= highDb;
  const fromHarmonics = `${flooredDb(Math.sqrt(knownPower)).toFixed(2)} dB from its harmonics`;
  if (!within(reading.thdDb)) {
    return `The reading's THD (${reading.thdDb.toFixed(2)} dB) is not the ${fromHarmonics}: it was not produced by the meter.`;
  }
  if (!within(flooredDb(reading.thdPercent / 100))) {
    return `The reading's THD (${reading.thdPercent.toPrecision(3)} %) is not the ${fromHarmonics}: it was not produced by the meter.`;
  }
  return whyThdnInconsistent(reading);
}

/**
 * THD+N against the rest of the reading. THD+N is everything but the fundamental inside the band
 * (AES17), so the harmonics inside the band are part of it: it cannot lie below their RSS. Its
 * percent and dB are one ratio (dB = 20·log10(%/100)), and SINAD is its reciprocal, −THD+N in dB
 * (IEEE 1241). The meter writes THD+N 0 %, the floor and SINAD 0 dB when there is no fundamental.
 */
function whyThdnInconsistent(reading: Reading): string | null {
  const notMeter = 'it was not produced by the meter.';
  if (Math.abs(flooredDb(reading.thdnPercent / 100) - Math.max(FLOOR_DB, reading.thdnDb)) > THD_CONSISTENCY_DB) {
    return `The reading's THD+N (${reading.thdnPercent.toPrecision(3)} %) is not its ${reading.thdnDb.toFixed(2)} dB: ${notMeter}`;
  }
  const noFundamental = reading.thdnDb <= FLOOR_DB && reading.sinadDb === 0;
  if (!noFundamental && Math.abs(reading.sinadDb + reading.thdnDb) > THD_CONSISTENCY_DB) {
    return `The reading's SINAD (${reading.sinadDb.toFixed(2)} dB) is not the opposite of its THD+N (${reading.thdnDb.toFixed(2)} dB): ${notMeter}`;
  }
  let inBandPower = 0;
  for (const harmonic of reading.harmonics) {
    const inBand = harmonic.frequencyHz >= reading.bandHz.lowHz && harmonic.frequencyHz <= reading.bandHz.highHz;
    if (inBand && harmonic.levelDbc > FLOOR_DB) inBandPower += 10 ** (harmonic.levelDbc / 10);
  }
  const inBandThdDb = flooredDb(Math.sqrt(inBandPower));
  if (inBandPower > 0 && reading.thdnDb < inBandThdDb - THD_CONSISTENCY_DB) {
    return `The reading's THD+N (${reading.thdnDb.toFixed(2)} dB) is below the ${inBandThdDb.toFixed(2)} dB of the harmonics inside its band, which are part of it: ${notMeter}`;
  }
  return null;
}

/**
 * THD in dB from the harmonics alone (RSS over the fundamental, as whyReadingInconsistent reads it).
 * A harmonic at the floor counts at the floor: the upper bound, so a verdict judged from it never
 * rests on a harmonic smaller than it could have been. Main judges with this, not with the page's thdDb.
 */
export function thdDbFromHarmonics(harmonics: Reading['harmonics']): number {
  let power = 0;
  for (const harmonic of harmonics) power += 10 ** (harmonic.levelDbc / 10);
  return flooredDb(Math.sqrt(power));
}
