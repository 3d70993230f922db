// A procedure is a model's ordered steps with limits. It carries a revision, and every run
// names the revision it used. Stored as JSON with a schema version so old files stay readable.

import { z } from 'zod';

export const PROCEDURE_SCHEMA_VERSION = 1;

// The defaults below fill fields that definitions stored by earlier releases lack, and such a
// definition is read through them every time (docs/procedures.md, "The conversion is fixed"):
// changing one would change old runs' procedures. Never change a default; add a revision instead.
export const procedureSchema = z.object({
  schemaVersion: z.literal(PROCEDURE_SCHEMA_VERSION),
  code: z.string().min(1).max(40),
  revision: z.string().min(1).max(10),
  title: z.string().min(1).max(200),
  /** Demo procedures hold made-up values and say so wherever they are shown. */
  invented: z.boolean(),
  model: z.object({
    code: z.string().min(1).max(40),
    name: z.string().min(1).max(200),
    maker: z.string().min(1).max(200),
  }),
  /** A unit is started only on a station whose level calibration holds for the audio setup in use. */
  requiresCalibration: z.boolean().default(false),
  serial: z.object({
    /** Anchored regular expression the serial must match. */
    pattern: z.string().min(1).max(200),
    example: z.string().min(1).max(40),
  }),
  trim: z.object({
    stimulusHz: z.number().positive(),
    stimulusLevelDbfs: z.number().max(0),
    /**
     * The window (dBFS) the captured fundamental must lie in at this step with the generator at
     * stimulusLevelDbfs: it holds the unit at any trimmer setting short of oscillation and refuses
     * what is not the unit's answer to the stimulus (wrong channel, unit off, wrong gain).
     * Revision A procedures were stored without it: null, and then only the frequency is checked.
     */
    expectedLevelDbfs: z
      .object({ low: z.number().max(0), high: z.number().max(0) })
      .refine((w) => w.low < w.high, 'low must be below high')
      .nullable()
      .default(null),
    /** How far (percent) the captured fundamental may lie from the generator's frequency. */
    frequencyTolerancePercent: z.number().positive().max(20).default(1),
    positionUnit: z.string().min(1).max(20),
    positionMin: z.number(),
    positionMax: z.number(),
    positionStep: z.number().positive(),
    /** Pass when THD at the final trim point is at or below this. */
    limitThdDb: z.number(),
    /** The harmonic the trim works on. */
    harmonicOrder: z.number().int().min(2).max(10).default(3),
    /** The recommended setting keeps the predicted level within this many dB of the null. */
    marginDb: z.number().positive().default(1),
    /** Warn when the gain at the test frequency is up this much from the safe end. */
    gainRiseDb: z.number().positive().default(0.5),
    /** Warn when the sub-audio level is up this much from the safe end. */
    lfRiseDb: z.number().positive().default(10),
    instructions: z.array(z.string().min(1)).min(1),
  }),
});

export type Procedure = z.infer<typeof procedureSchema>;
