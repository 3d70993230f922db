import { describe, expect, it } from 'vitest';
import { DEMO_PROCEDURE } from '../../shared/procedures/demo-procedure.ts';
import { checkSerial } from '../../shared/records/serial.ts';
import { judgeThd } from '../../shared/records/verdict.ts';

describe('serial numbers from a scanner or the keyboard', () => {
  it('accepts the model form and normalises case and scanner suffixes', () => {
    expect(checkSerial('MG20-2611-0042', DEMO_PROCEDURE)).toEqual({ ok: true, serial: 'MG20-2611-0042' });
    // Scanners commonly end with CR/LF or a tab (common practice); people type lower case.
    expect(checkSerial(' mg20-2611-0042\r\n', DEMO_PROCEDURE)).toEqual({ ok: true, serial: 'MG20-2611-0042' });
    expect(checkSerial('MG20-2611-0042\t', DEMO_PROCEDURE)).toEqual({ ok: true, serial: 'MG20-2611-0042' });
  });

  it.each(['', '   ', 'MG20-26110042', 'MG20-2611-042', 'MG20-2611-0042X', 'XX20-2611-0042', 'MG20 2611 0042'])(
    'refuses “%s” with a message naming the expected form',
    (text) => {
      const check = checkSerial(text, DEMO_PROCEDURE);
      expect(check.ok).toBe(false);
      if (!check.ok) expect(check.message).toMatch(text.trim() === '' ? /Enter or scan/ : /MG20-2611-0042/);
    },
  );
});

describe('verdict', () => {
  it('passes at or below the limit and fails above it (limits are inclusive, common practice)', () => {
    expect(judgeThd(-60, -60)).toBe('pass');
    expect(judgeThd(-60.1, -60)).toBe('pass');
    expect(judgeThd(-59.9, -60)).toBe('fail');
  });
});
