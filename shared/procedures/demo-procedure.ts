// The built-in demo procedure. Everything here is invented for the demo scenario (a made-up
// maker and product); none of it describes a real product or a real limit.

import { PROCEDURE_SCHEMA_VERSION, type Procedure } from './procedure.ts';

export const DEMO_PROCEDURE: Procedure = {
  schemaVersion: PROCEDURE_SCHEMA_VERSION,
  code: 'MG20-LF-TRIM',
  revision: 'B',
  title: 'MG-20 low-frequency compensation trim (demo — invented values)',
  invented: true,
  model: {
    code: 'MG-20',
    name: 'MG-20 transformer line amplifier',
    maker: 'Marrowgate Audio Works (invented)',
  },
  // The demo bench needs no interface, so it cannot need a calibrated one.
  requiresCalibration: false,
  serial: { pattern: '^MG20-[0-9]{4}-[0-9]{4}$', example: 'MG20-2611-0042' },
  trim: {
    stimulusHz: 14,
    stimulusLevelDbfs: -12,
    // Invented. The demo unit (shared/sim/demo-unit.ts) returns its −12 dBFS stimulus at −12.3 dBFS
    // at the safe end and −11.7 dBFS just short of oscillation (about 6 turns): the window leaves
    // 3 dB either side of that for the interface's own gain, and refuses a capture 16 dB low.
    expectedLevelDbfs: { low: -15, high: -9 },
    // Invented. A 14 Hz tone read from a 12-cycle frame is good to far better than 1 %; a tone 1 %
    // away is another source (or the unit oscillating on its own).
    frequencyTolerancePercent: 1,
    positionUnit: 'turns',
    positionMin: 0,
    positionMax: 10,
    positionStep: 0.25,
    limitThdDb: -60,
    harmonicOrder: 3,
    marginDb: 1,
    // The demo unit's gain recovers about 0.6 dB between the safe end and the null as the winding
    // resistance is cancelled; the warning threshold sits above that (invented, like the rest).
    gainRiseDb: 1,
    // Its sub-audio resonance peaks up by 10 dB or so near the null while still stable; the warning
    // waits for more than that (invented too).
    lfRiseDb: 20,
    instructions: [
      'Mute or disconnect monitor speakers and headphones: an oscillating unit or a full-level 14 Hz tone can damage drivers and hearing.',
      'The unit is mains powered and its cover is off: follow your workplace electrical-safety rules and local codes; keep one hand away from the chassis.',
      'Set the compensation trimmer to the safe end (0 turns, least compensation) before power-up.',
      'Connect the generator output to the unit input and the unit output to the chosen capture channel.',
      'Turn the generator on, let the reading settle, and record a trim point at each position, moving toward more compensation.',
      'Stop and back off toward the safe end at once if the gain rises or the reading wanders.',
    ],
  },
};
