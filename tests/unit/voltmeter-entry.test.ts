// Voltmeter entries in every unit and the calibration arithmetic built on them. Expected values
// come from the definitions: 0 dBu = √0.6 V RMS (1 mW in 600 Ω), 0 dBV = 1 V RMS.

import { describe, expect, it } from 'vitest';
import {
  checkDbuAtFullScale,
  inputCalibrationFromLoopback,
  inputCalibrationFromSpec,
  outputCalibrationFromReading,
  parseVoltmeterEntry,
} from '../../shared/calibration/voltmeter-entry.ts';

const ZERO_DBU_V = Math.sqrt(0.001 * 600);
const dbuOfVolts = (v: number) => 20 * Math.log10(v / ZERO_DBU_V);
const dbuOfDbv = (dbv: number) => dbuOfVolts(10 ** (dbv / 20));

describe('parseVoltmeterEntry: every unit form', () => {
  it.each([
    ['1.228 V', dbuOfVolts(1.228), 'V'],
    ['1.228V', dbuOfVolts(1.228), 'V'],
    ['1.228 v', dbuOfVolts(1.228), 'V'],
    ['0.775 V AC', dbuOfVolts(0.775), 'V'],
    ['775 mV', dbuOfVolts(0.775), 'mV'],
    ['775mV', dbuOfVolts(0.775), 'mV'],
    ['775 mv', dbuOfVolts(0.775), 'mV'],
    ['775 mV RMS', dbuOfVolts(0.775), 'mV'],
    ['+4 dBu', 4, 'dBu'],
    ['4dBu', 4, 'dBu'],
    ['4 DBU', 4, 'dBu'],
    ['-10 dBu', -10, 'dBu'],
    ['\u221210 dBu', -10, 'dBu'],
    ['1.78 dBV', dbuOfDbv(1.78), 'dBV'],
    ['-10 dBV', dbuOfDbv(-10), 'dBV'],
    ['-10dbv', dbuOfDbv(-10), 'dBV'],
    ['  .5 V ', dbuOfVolts(0.5), 'V'],
  ])('%s', (text, expectedDbu, unit) => {
    const entry = parseVoltmeterEntry(text);
    expect(entry.ok).toBe(true);
    if (!entry.ok) return;
    expect(entry.dbu).toBeCloseTo(expectedDbu, 10);
    expect(entry.vRms).toBeCloseTo(ZERO_DBU_V * 10 ** (expectedDbu / 20), 12);
    expect(entry.unit).toBe(unit);
    expect(entry.entered.endsWith(` ${unit}`)).toBe(true);
  });

  it('+4 dBu and 1.228 V are the same reading to within the 4 digits typed; 0 dBV is 1 V', () => {
    const a = parseVoltmeterEntry('+4 dBu');
    const b = parseVoltmeterEntry('1.228 V');
    const c = parseVoltmeterEntry('0 dBV');
    expect(a.ok && b.ok && c.ok).toBe(true);
    if (a.ok && b.ok && c.ok) {
      expect(Math.abs(a.dbu - b.dbu)).toBeLessThan(0.005);
      expect(c.vRms).toBeCloseTo(1, 12);
    }
  });
});

describe('parseVoltmeterEntry: refused with a message saying what to type', () => {
  it.each([
    ['1,228 V', /decimal point, not a comma \(type 1\.228 V\)/],
    ['775', /has no unit; add V, mV, dBu or dBV/],
    ['', /Type the voltmeter reading with its unit/],
    ['775 MV', /MV means megavolts; type mV/],
    ['+4 dBm', /dBm is a power level/],
    ['4 dBa', /unknown unit “dBa”/],
    ['1e3 mV', /not a reading/],
    ['0x10 V', /not a reading/],
    ['Infinity V', /not a reading/],
    ['V 1.2', /not a reading/],
    ['-1.2 V', /RMS voltage is above 0/],
    ['0 V', /RMS voltage is above 0/],
    ['1500 V', /outside what a bench voltmeter reads/],
    ['0.0001 mV', /outside what a bench voltmeter reads/],
    ['+70 dBu', /outside what a bench voltmeter reads/],
  ])('%s', (text, message) => {
    const entry = parseVoltmeterEntry(text);
    expect(entry.ok).toBe(false);
    if (!entry.ok) {
      expect(entry.message).toMatch(message);
      expect(entry.message.length).toBeLessThan(160);
    }
  });
});

describe('output calibration from a voltmeter reading', () => {
  it('stores reading − reference: +6 dBu read at −12 dBFS is +18 dBu at 0 dBFS', () => {
    const result = outputCalibrationFromReading(-12, `${ZERO_DBU_V * 10 ** (6 / 20)} V`);
    expect(result.ok).toBe(true);
    expect(result.dbuAtFullScale).toBeCloseTo(18, 10);
    if (result.ok) expect(result.note).toBeNull();
  });

  it('a consumer interface near +2 dBV at full scale is plausible', () => {
    // −10 dBFS reading −8 dBV: full scale is +2 dBV.
    const result = outputCalibrationFromReading(-10, '-8 dBV');
    expect(result.ok).toBe(true);
    expect(result.dbuAtFullScale).toBeCloseTo(dbuOfDbv(2), 10);
  });

  it('a reading 1000 times too high (mV typed as V) is refused, saying mV or V', () => {
    // The meter showed 490 mV (−4.0 dBu, so +8 dBu at 0 dBFS for a −12 dBFS tone), typed as 490 V.
    const result = outputCalibrationFromReading(-12, '490 V');
    expect(result.ok).toBe(false);
    if (!result.ok) expect(result.message).toMatch(/1000 times too high; check whether the meter shows mV or V/);
  });

  it('a reading 1000 times too low is refused the same way', () => {
    const result = outputCalibrationFromReading(-12, '1.5 mV');
    expect(result.ok).toBe(false);
    if (!result.ok) expect(result.message).toMatch(/1000 times too low; check whether the meter shows mV or V/);
  });

  it('a reading 10 times off an expected level is refused as a meter range or decimal-point mistake', () => {
    // Expected +18 dBu at 0 dBFS; the meter reads 0.2 V at −12 dBFS instead of about 1.95 V.
    const expectedV = ZERO_DBU_V * 10 ** ((18 - 12) / 20);
    const result = outputCalibrationFromReading(-12, `${(expectedV / 10).toFixed(4)} V`, 18);
    expect(result.ok).toBe(false);
    if (!result.ok) expect(result.message).toMatch(/10 times too low; check the meter's range and the decimal point/);
  });

  it('a plausible level 6 dB off the expected one is accepted with a note', () => {
    const result = outputCalibrationFromReading(-12, `${ZERO_DBU_V} V`, 18);
    expect(result.ok).toBe(true);
    if (result.ok) expect(result.note).toMatch(/−6\.0 dB from the expected \+18\.0 dBu/);
  });

  it('a level outside −20 … +30 dBu at 0 dBFS and no factor of 10 or 1000 from it is refused', () => {
    expect(checkDbuAtFullScale(31, null, 'x').ok).toBe(false);
    expect(checkDbuAtFullScale(30, null, 'x').ok).toBe(true);
    expect(checkDbuAtFullScale(-20, null, 'x').ok).toBe(true);
    const far = checkDbuAtFullScale(-100, null, 'The reading');
    expect(far.ok).toBe(false);
    if (!far.ok) expect(far.message).toMatch(/outside the −20\.0 dBu to \+30\.0 dBu of audio interfaces; check the reading/);
  });

  it('passes an unreadable entry’s message through', () => {
    const result = outputCalibrationFromReading(-12, '1,95 V');
    expect(result.ok).toBe(false);
    if (!result.ok) expect(result.message).toMatch(/decimal point/);
  });
});

describe('input calibration', () => {
  it('loopback: generator + output calibration − captured level', () => {
    // Output full scale +18 dBu; −12 dBFS played is +6 dBu at the input; read at −16 dBFS,
    // so the input's full scale is +6 − (−16) = +22 dBu.
    const result = inputCalibrationFromLoopback({ outputDbuAtFullScale: 18, generatorDbfs: -12, capturedDbfs: -16 });
    expect(result.ok).toBe(true);
    expect(result.dbuAtFullScale).toBeCloseTo(22, 12);
  });

  it('refuses a capture too low to trust or at clipping', () => {
    const low = inputCalibrationFromLoopback({ outputDbuAtFullScale: 18, generatorDbfs: -12, capturedDbfs: -90 });
    expect(low.ok).toBe(false);
    if (!low.ok) expect(low.message).toMatch(/too low to calibrate by; check the loop cable/);
    const clipped = inputCalibrationFromLoopback({ outputDbuAtFullScale: 18, generatorDbfs: -12, capturedDbfs: -0.1 });
    expect(clipped.ok).toBe(false);
    if (!clipped.ok) expect(clipped.message).toMatch(/near clipping/);
  });

  it('fixed input: the interface’s stated level for 0 dBFS, in any unit', () => {
    const dbu = inputCalibrationFromSpec('+24 dBu');
    expect(dbu.ok).toBe(true);
    expect(dbu.dbuAtFullScale).toBe(24);
    const dbv = inputCalibrationFromSpec('2 dBV');
    expect(dbv.dbuAtFullScale).toBeCloseTo(dbuOfDbv(2), 12);
    const volts = inputCalibrationFromSpec('12.28 V');
    expect(volts.dbuAtFullScale).toBeCloseTo(dbuOfVolts(12.28), 12);
    expect(inputCalibrationFromSpec('24').ok).toBe(false);
    expect(inputCalibrationFromSpec('+60 dBu').ok).toBe(false);
  });

  it('refuses a reference level outside −40 … 0 dBFS as a programming error', () => {
    expect(() => outputCalibrationFromReading(3, '1 V')).toThrow(RangeError);
  });
});
