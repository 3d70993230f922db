// Short texts shown to people (operator, station name, a warning's description): printable, and
// not blank to the eye.

import { z } from 'zod';

/** Nothing a terminal or a bidi-aware renderer would act on: C0/C1 controls (ESC, NUL …) and bidi overrides. */
const CONTROL_OR_BIDI = /[\p{Cc}\u061C\u200E\u200F\u202A-\u202E\u2066-\u2069]/u;
/** Spaces, zero-width and other invisible format characters: a name of only these shows as blank. */
const INVISIBLE = /^[\p{Z}\s\p{Cf}\u115F\u1160\u3164\uFFA0]*$/u;

export function plainText(field: string, maxChars: number) {
  return z
    .string()
    .max(maxChars, `The ${field} is longer than ${maxChars} characters: shorten it.`)
    .refine((text) => !CONTROL_OR_BIDI.test(text), `The ${field} holds control or text-direction characters: type it again in plain text.`)
    .refine((text) => !INVISIBLE.test(text), `Enter the ${field}: it is empty or only spaces.`);
}
