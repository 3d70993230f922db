// Serial numbers come from a barcode scanner (fast keystrokes ending in Enter) or the keyboard.
// Checked in the renderer for an immediate message and again in main before anything is written.

import type { Procedure } from '../procedures/procedure.ts';

export type SerialCheck = { ok: true; serial: string } | { ok: false; message: string };

/** Characters a scanner or a person may add around a serial: whitespace and control codes. */
const SURROUNDING_JUNK = /^[\s\x00-\x1f]+|[\s\x00-\x1f]+$/g;

export function checkSerial(text: string, procedure: Pick<Procedure, 'serial' | 'model'>): SerialCheck {
  const serial = text.replace(SURROUNDING_JUNK, '').toUpperCase();
  if (serial === '') return { ok: false, message: 'Enter or scan a serial number.' };
  if (!new RegExp(procedure.serial.pattern).test(serial)) {
    return {
      ok: false,
      message: `“${serial}” is not a ${procedure.model.code} serial number (expected the form ${procedure.serial.example}).`,
    };
  }
  return { ok: true, serial };
}
