// Procedure files, schema 2: a model's whole procedure (safety notice, trim, checks with limits)
// as a JSON file the line writes and owns. docs/procedures.md describes the format for the people
// who write these files; this module is the one place that decides whether a file is valid, for
// the command line and for import in the app alike.
//
// Every number is bounded to what a bench like ours can physically do, so a typing error (a
// missing minus sign, kHz written as Hz) is caught here and not on the unit.

import { z } from 'zod';
import { PROCEDURE_SCHEMA_VERSION as SCHEMA_1, procedureSchema as schema1, type Procedure as ProcedureV1 } from './procedure.ts';
import { joinPath, readJsonText } from './json-text.ts';
import { SQUARE_MAX_LEVEL_DBFS } from '../dsp/square-wave.ts';
import { sweepDurationToResolve } from '../measurement/sweep-response.ts';

export const PROCEDURE_FILE_SCHEMA_VERSION = 2;

/** Physical ranges. Exported so the documentation test and the app's forms use the same numbers. */
export const PROCEDURE_RANGES = {
  // The highest sample rate in use on the line is 192 kHz: nothing above its Nyquist can be played or read.
  frequencyHz: { min: 1, max: 96_000 },
  // Below −120 dBFS a tone is under any interface's noise; above 0 dBFS it clips.
  levelDbfs: { min: -120, max: 0 },
  // Professional interfaces reach about +24 to +30 dBu at full scale; −80 dBu is well under any working level.
  levelDbu: { min: -80, max: 30 },
  // THD, THD+N and harmonic levels relative to the fundamental: a 24-bit chain floors near −150 dB.
  ratioDb: { min: -160, max: 0 },
  gainDb: { min: -60, max: 60 },
  balanceDb: { min: -40, max: 40 },
  // Noise and hum below −160 dBu are under the thermal noise of any source; above +30 dBu is not noise.
  noiseDbu: { min: -160, max: 30 },
  trimPosition: { min: -1000, max: 1000 },
  // Ringing after a square wave's edge: a transformer output stage rings from tens of kHz (its
  // leakage resonance) to a few MHz; a scope record of it covers microseconds to milliseconds.
  ringFrequencyHz: { min: 1_000, max: 100_000_000 },
  // The damping ratio of a ringing (underdamped) response lies between 0 and 1.
  dampingRatio: { min: 0, max: 1 },
  overshootPercent: { min: 0, max: 100 },
  settlingTimeS: { min: 0, max: 1 },
  // A scope exports a handful of channels; the voltage columns are counted from 0.
  scopeChannel: { min: 0, max: 15 },
  channels: { min: 1, max: 16 },
  // A sweep's length from start to end frequency: the analysis holds at most 2^21 samples (43 s at 48 kHz).
  sweepDurationS: { min: 0.5, max: 30 },
  // A response mask's bounds relative to the reference frequency.
  maskDb: { min: -60, max: 20 },
} as const;

export const STEP_KINDS = ['notice', 'trim', 'distortion', 'gain', 'noise', 'hum', 'balance', 'crosstalk', 'max-level', 'response', 'ringing'] as const;
export type StepKind = (typeof STEP_KINDS)[number];
export const CHECK_KINDS = ['distortion', 'gain', 'noise', 'hum', 'balance', 'crosstalk', 'max-level', 'response'] as const satisfies readonly StepKind[];
/** Kinds that compare two of the unit's channels. */
export const TWO_CHANNEL_KINDS = ['balance', 'crosstalk'] as const satisfies readonly StepKind[];
export const HARMONIC_NAMES = ['H2', 'H3', 'H4', 'H5', 'H6', 'H7', 'H8', 'H9', 'H10'] as const;

const inRange = (range: { min: number; max: number }, unit: string) =>
  z.number().min(range.min, `must be at least ${range.min} ${unit}`).max(range.max, `must be at most ${range.max} ${unit}`);

const text = (max: number) => z.string().trim().min(1, 'must not be empty').max(max, `must be at most ${max} characters`);
const lines = z.array(text(500)).min(1, 'needs at least one line').max(30, 'must have at most 30 lines');
const frequencyHz = inRange(PROCEDURE_RANGES.frequencyHz, 'Hz');

/**
 * One limit: the measured value passes when low ≤ value ≤ high (inclusive). At least one bound;
 * `unit` repeats the quantity's unit so a reader of the file never has to guess it.
 */
function limit<const U extends string>(unit: U, range: { min: number; max: number }) {
  return z
    .strictObject({
      low: inRange(range, unit).optional(),
      high: inRange(range, unit).optional(),
      unit: z.literal(unit, `must be "${unit}"`),
    })
    .superRefine((l, ctx) => {
      if (l.low === undefined && l.high === undefined) ctx.addIssue({ code: 'custom', message: 'needs a low or a high bound (or both)', path: [] });
      if (l.low !== undefined && l.high !== undefined && !(l.low < l.high)) ctx.addIssue({ code: 'custom', message: 'low must be below high', path: ['high'] });
    });
}
export type Limit = { low?: number; high?: number; unit: string };

/** A stimulus level in dBFS (the generator's scale) or dBu (needs a calibrated station). */
const level = z.discriminatedUnion(
  'unit',
  [
    z.strictObject({ value: inRange(PROCEDURE_RANGES.levelDbfs, 'dBFS'), unit: z.literal('dBFS') }),
    z.strictObject({ value: inRange(PROCEDURE_RANGES.levelDbu, 'dBu'), unit: z.literal('dBu') }),
  ],
  { error: 'unit must be "dBFS" or "dBu"' },
);

const onFail = z.enum(['stop', 'continue'], 'must be "stop" (the run ends as FAIL) or "continue" (the run goes on; the unit still fails)');

const stepBase = {
  id: z
    .string()
    .max(40, 'must be at most 40 characters')
    .regex(/^[a-z0-9]+(?:-[a-z0-9]+)*$/, 'must be kebab-case: lower-case letters and digits joined by single hyphens, e.g. "thd-14hz"'),
  title: text(120),
  instructions: lines,
};

/** Which of the unit's two channels: numbered from 1 as on the unit's panel. */
const channelPair = z
  .tuple([z.number().int('must be a whole number').min(1, 'channels are numbered from 1').max(PROCEDURE_RANGES.channels.max), z.number().int('must be a whole number').min(1, 'channels are numbered from 1').max(PROCEDURE_RANGES.channels.max)], {
    error: 'must be two channel numbers, e.g. [1, 2]',
  })
  .refine(([a, b]) => a !== b, 'the two channels must differ');

const atLeastOneLimit = (limits: Record<string, unknown>) => Object.values(limits).some((l) => l !== undefined);

export const noticeStepSchema = z.strictObject({
  ...stepBase,
  kind: z.literal('notice'),
  /** What the technician confirms by acknowledging, in the first person: "Monitors are muted." */
  acknowledgement: text(200),
});

export const trimStepSchema = z
  .strictObject({
    ...stepBase,
    kind: z.literal('trim'),
    // The parameters of today's trim step (shared/procedures/procedure.ts), same names and meaning.
    stimulusHz: frequencyHz,
    stimulusLevelDbfs: inRange(PROCEDURE_RANGES.levelDbfs, 'dBFS'),
    expectedLevelDbfs: z
      .strictObject({ low: inRange(PROCEDURE_RANGES.levelDbfs, 'dBFS'), high: inRange(PROCEDURE_RANGES.levelDbfs, 'dBFS') })
      .refine((w) => w.low < w.high, { message: 'low must be below high', path: ['high'] })
      .nullable(),
    frequencyTolerancePercent: z.number().gt(0, 'must be above 0 %').max(20, 'must be at most 20 %'),
    positionUnit: text(20),
    positionMin: inRange(PROCEDURE_RANGES.trimPosition, ''),
    positionMax: inRange(PROCEDURE_RANGES.trimPosition, ''),
    positionStep: z.number().gt(0, 'must be above 0'),
    limitThdDb: inRange(PROCEDURE_RANGES.ratioDb, 'dB'),
    harmonicOrder: z.number().int('must be a whole number').min(2, 'must be at least 2').max(10, 'must be at most 10'),
    marginDb: z.number().gt(0, 'must be above 0 dB').max(20, 'must be at most 20 dB'),
    gainRiseDb: z.number().gt(0, 'must be above 0 dB').max(20, 'must be at most 20 dB'),
    lfRiseDb: z.number().gt(0, 'must be above 0 dB').max(60, 'must be at most 60 dB'),
    onFail,
  })
  .superRefine((s, ctx) => {
    if (!(s.positionMin < s.positionMax)) ctx.addIssue({ code: 'custom', message: 'must be above positionMin', path: ['positionMax'] });
    else if (s.positionStep > s.positionMax - s.positionMin) ctx.addIssue({ code: 'custom', message: 'must be no larger than positionMax − positionMin', path: ['positionStep'] });
  });

const harmonicLimits = z.strictObject(Object.fromEntries(HARMONIC_NAMES.map((h) => [h, limit('dBc', PROCEDURE_RANGES.ratioDb).optional()])) as Record<(typeof HARMONIC_NAMES)[number], z.ZodOptional<ReturnType<typeof limit<'dBc'>>>>);

export const distortionStepSchema = z.strictObject({
  ...stepBase,
  kind: z.literal('distortion'),
  frequencyHz,
  level,
  limits: z
    .strictObject({
      thdDb: limit('dB', PROCEDURE_RANGES.ratioDb).optional(),
      thdnDb: limit('dB', PROCEDURE_RANGES.ratioDb).optional(),
      harmonicsDbc: harmonicLimits.optional(),
    })
    .refine((l) => l.thdDb !== undefined || l.thdnDb !== undefined || (l.harmonicsDbc !== undefined && atLeastOneLimit(l.harmonicsDbc)), 'needs at least one of thdDb, thdnDb or harmonicsDbc'),
  onFail,
});

export const gainStepSchema = z.strictObject({
  ...stepBase,
  kind: z.literal('gain'),
  frequencyHz,
  level,
  limits: z.strictObject({ gainDb: limit('dB', PROCEDURE_RANGES.gainDb) }),
  onFail,
});

export const noiseStepSchema = z.strictObject({
  ...stepBase,
  kind: z.literal('noise'),
  band: z
    .strictObject({ lowHz: frequencyHz, highHz: frequencyHz })
    .refine((b) => b.lowHz < b.highHz, { message: 'must be above lowHz', path: ['highHz'] }),
  weighting: z.enum(['unweighted', 'A'], 'must be "unweighted" or "A" (IEC 61672 A-weighting)'),
  /** How the technician terminates the unit's input while the generator is off. */
  inputTermination: text(200),
  limits: z.strictObject({ noiseDbu: limit('dBu', PROCEDURE_RANGES.noiseDbu) }),
  onFail,
});

export const humStepSchema = z.strictObject({
  ...stepBase,
  kind: z.literal('hum'),
  /** Mains fundamental plus this many of its harmonics in all (1 = the fundamental only). */
  mainsHarmonics: z.number().int('must be a whole number').min(1, 'must be at least 1').max(8, 'must be at most 8'),
  inputTermination: text(200),
  limits: z.strictObject({ humDbu: limit('dBu', PROCEDURE_RANGES.noiseDbu) }),
  onFail,
});

export const balanceStepSchema = z.strictObject({
  ...stepBase,
  kind: z.literal('balance'),
  /** Gain of the second channel minus gain of the first, both driven with the same stimulus. */
  channels: channelPair,
  frequencyHz,
  level,
  limits: z.strictObject({ balanceDb: limit('dB', PROCEDURE_RANGES.balanceDb) }),
  onFail,
});

export const crosstalkStepSchema = z.strictObject({
  ...stepBase,
  kind: z.literal('crosstalk'),
  /** The first channel is driven; the level at the second's output, relative to the first's. */
  channels: channelPair,
  frequencyHz,
  level,
  limits: z.strictObject({ crosstalkDb: limit('dB', PROCEDURE_RANGES.ratioDb) }),
  onFail,
});

/**
 * Square-wave ringing from an oscilloscope record (shared/procedures/ringing.ts judges it). The level
 * sets the square's flat top as the peak of a sine at that level; the square's edges keep inside full
 * scale only up to SQUARE_MAX_LEVEL_DBFS.
 */
export const ringingStepSchema = z.strictObject({
  ...stepBase,
  kind: z.literal('ringing'),
  squareHz: inRange({ min: 20, max: 48_000 }, 'Hz'),
  level: level.refine((l) => l.unit !== 'dBFS' || l.value <= SQUARE_MAX_LEVEL_DBFS, {
    message: `a square wave's level must be at most ${SQUARE_MAX_LEVEL_DBFS.toFixed(1)} dBFS (its edges' overshoot reaches full scale there)`,
    path: ['value'],
  }),
  /** The scope's voltage column holding the unit's output, counted from 0 as the ringing command counts them. */
  channel: z.number().int('must be a whole number').min(PROCEDURE_RANGES.scopeChannel.min, 'voltage columns are counted from 0').max(PROCEDURE_RANGES.scopeChannel.max, `must be at most ${PROCEDURE_RANGES.scopeChannel.max}`),
  limits: z
    .strictObject({
      ringFrequencyHz: limit('Hz', PROCEDURE_RANGES.ringFrequencyHz).optional(),
      dampingRatio: limit('ratio', PROCEDURE_RANGES.dampingRatio).optional(),
      overshootPercent: limit('%', PROCEDURE_RANGES.overshootPercent).optional(),
      settlingTimeS: limit('s', PROCEDURE_RANGES.settlingTimeS).optional(),
    })
    .refine(atLeastOneLimit, 'needs at least one of ringFrequencyHz, dampingRatio, overshootPercent or settlingTimeS'),
  onFail,
});

/**
 * The rise of a max-level step: steps of at least 0.25 dB (finer is below what a technician's
 * readings resolve at a knee) and at most 6 dB (coarser would leap over the onset of clipping),
 * and the THD+N at which the level counts as the maximum: 0.01 % is near the floor of a good
 * station chain, 30 % is a waveform clipped flat (1 % is the usual rating point, common practice).
 */
export const MAX_LEVEL_RANGES = { stepDb: { min: 0.25, max: 6 }, thdnThresholdPercent: { min: 0.01, max: 30 }, steps: { max: 100 } } as const;

export const maxLevelStepSchema = z
  .strictObject({
    ...stepBase,
    kind: z.literal('max-level'),
    frequencyHz,
    /** The generator's first level; it then rises by stepDb, never above ceiling. */
    startLevel: level,
    stepDb: inRange(MAX_LEVEL_RANGES.stepDb, 'dB'),
    /** The highest generator level the step may ever play. */
    ceiling: level,
    thdnThresholdPercent: inRange(MAX_LEVEL_RANGES.thdnThresholdPercent, '%'),
    limits: z.strictObject({
      // A maximum level is a level the unit must reach: judged from below only, so that a lower
      // bound (the ceiling reached without crossing) that meets it is an earned pass.
      maxLevelDbu: limit('dBu', PROCEDURE_RANGES.levelDbu).refine((l) => l.low !== undefined && l.high === undefined, 'must have a low bound only: a maximum level is a level the unit must at least reach'),
    }),
    onFail,
  })
  .superRefine((s, ctx) => {
    if (s.startLevel.unit !== s.ceiling.unit) {
      ctx.addIssue({ code: 'custom', message: `must be in the same unit as startLevel ("${s.startLevel.unit}"), so the steps between them are known from the file`, path: ['ceiling', 'unit'] });
    } else if (!(s.startLevel.value < s.ceiling.value)) {
      ctx.addIssue({ code: 'custom', message: 'must be above startLevel', path: ['ceiling', 'value'] });
    } else if (s.stepDb >= MAX_LEVEL_RANGES.stepDb.min && (s.ceiling.value - s.startLevel.value) / s.stepDb + 1 > MAX_LEVEL_RANGES.steps.max) {
      ctx.addIssue({ code: 'custom', message: `gives more than ${MAX_LEVEL_RANGES.steps.max} levels from startLevel to ceiling: raise stepDb or start higher`, path: ['stepDb'] });
    }
  });

/**
 * Cycles of fromHz a response step's sweep must fit before its H2 response (Farina's spacing L·ln 2,
 * L = T/ln(toHz/fromHz)). The analysis resolves 4, but its reading at the band's start is then
 * smoothed: a 20 Hz second-order Butterworth corner (−3.01 dB) read 0.13 dB off with 4 cycles,
 * 0.07 dB with 8 and 0.013 dB with 12 (tests/unit/response-step.test.ts checks 0.05 dB on the
 * shortest sweep allowed). A mask a few tenths of a dB wide needs the last.
 */
export const RESPONSE_WINDOW_CYCLES = 12;

/** Sweep harmonics a response step may limit: the analysis reads H2 to H5 (shared/measurement/sweep-response.ts). */
export const SWEEP_HARMONIC_NAMES = ['H2', 'H3', 'H4', 'H5'] as const;

export const responseStepSchema = z
  .strictObject({
    ...stepBase,
    kind: z.literal('response'),
    /** The exponential sweep's start and end, Hz: the band the response is read over. */
    fromHz: frequencyHz,
    toHz: frequencyHz,
    /** From fromHz to toHz at full level, seconds; fades and silences come on top. */
    durationS: inRange(PROCEDURE_RANGES.sweepDurationS, 's'),
    level,
    /** The response is 0 dB here; inside the band. */
    referenceHz: frequencyHz,
    mask: z
      .array(
        z.strictObject({
          frequencyHz,
          lowDb: inRange(PROCEDURE_RANGES.maskDb, 'dB').optional(),
          highDb: inRange(PROCEDURE_RANGES.maskDb, 'dB').optional(),
        }),
      )
      .min(2, 'needs at least two points: the mask runs from its first point to its last')
      .max(64, 'must have at most 64 points'),
    limits: z
      .strictObject({
        harmonicsDbc: z.strictObject(Object.fromEntries(SWEEP_HARMONIC_NAMES.map((h) => [h, limit('dBc', PROCEDURE_RANGES.ratioDb).optional()])) as Record<(typeof SWEEP_HARMONIC_NAMES)[number], z.ZodOptional<ReturnType<typeof limit<'dBc'>>>>),
      })
      .optional(),
    onFail,
  })
  .superRefine((s, ctx) => {
    if (!(s.fromHz < s.toHz)) {
      ctx.addIssue({ code: 'custom', message: 'must be above fromHz', path: ['toHz'] });
      return;
    }
    const neededS = sweepDurationToResolve(s.fromHz, s.toHz, s.fromHz, RESPONSE_WINDOW_CYCLES);
    if (s.durationS < neededS) {
      ctx.addIssue({ code: 'custom', message: `must be at least ${Math.ceil(neededS * 10) / 10} s: a shorter sweep from ${s.fromHz} Hz to ${s.toHz} Hz reads ${s.fromHz} Hz, where the band starts, less closely than a limit needs`, path: ['durationS'] });
    }
    if (!(s.referenceHz >= s.fromHz && s.referenceHz <= s.toHz)) ctx.addIssue({ code: 'custom', message: `must lie inside the band, ${s.fromHz} to ${s.toHz} Hz`, path: ['referenceHz'] });
    const hasLow = s.mask.map((p) => p.lowDb !== undefined);
    const hasHigh = s.mask.map((p) => p.highDb !== undefined);
    if (!hasLow.every((h) => h === hasLow[0]) || !hasHigh.every((h) => h === hasHigh[0])) {
      ctx.addIssue({ code: 'custom', message: 'every point needs the same bounds: all with lowDb or none, all with highDb or none', path: ['mask'] });
    } else if (!hasLow[0] && !hasHigh[0]) ctx.addIssue({ code: 'custom', message: 'the points need lowDb, highDb or both', path: ['mask'] });
    s.mask.forEach((p, i) => {
      if (!(p.frequencyHz >= s.fromHz && p.frequencyHz <= s.toHz)) ctx.addIssue({ code: 'custom', message: `must lie inside the band, ${s.fromHz} to ${s.toHz} Hz`, path: ['mask', i, 'frequencyHz'] });
      if (i > 0 && !(p.frequencyHz > s.mask[i - 1].frequencyHz)) ctx.addIssue({ code: 'custom', message: 'the points must go up in frequency', path: ['mask', i, 'frequencyHz'] });
      if (p.lowDb !== undefined && p.highDb !== undefined && !(p.lowDb < p.highDb)) ctx.addIssue({ code: 'custom', message: 'must be above lowDb', path: ['mask', i, 'highDb'] });
    });
  });

const stepSchemas = {
  notice: noticeStepSchema,
  trim: trimStepSchema,
  distortion: distortionStepSchema,
  gain: gainStepSchema,
  noise: noiseStepSchema,
  hum: humStepSchema,
  balance: balanceStepSchema,
  crosstalk: crosstalkStepSchema,
  ringing: ringingStepSchema,
  'max-level': maxLevelStepSchema,
  response: responseStepSchema,
} as const;

export const procedureStepSchema = z.discriminatedUnion('kind', [
  noticeStepSchema,
  trimStepSchema,
  distortionStepSchema,
  gainStepSchema,
  noiseStepSchema,
  humStepSchema,
  balanceStepSchema,
  crosstalkStepSchema,
  ringingStepSchema,
  maxLevelStepSchema,
  responseStepSchema,
]);

export const procedureFileSchema = z.strictObject({
  schemaVersion: z.literal(PROCEDURE_FILE_SCHEMA_VERSION),
  code: text(40),
  revision: text(10),
  title: text(200),
  /** Demo procedures hold made-up values and say so wherever they are shown. */
  invented: z.boolean('must be true or false'),
  model: z.strictObject({
    code: text(40),
    name: text(200),
    maker: text(200),
    channels: z.number().int('must be a whole number').min(PROCEDURE_RANGES.channels.min, 'must be at least 1').max(PROCEDURE_RANGES.channels.max, `must be at most ${PROCEDURE_RANGES.channels.max}`),
  }),
  serial: z.strictObject({
    /** Anchored regular expression (ECMA-262) the serial must match, after upper-casing. */
    pattern: text(200),
    example: text(40),
  }),
  /** A unit is started only on a station whose level calibration holds for the audio setup in use. */
  requiresCalibration: z.boolean('must be true or false'),
  steps: z.array(procedureStepSchema).min(1, 'needs at least one step').max(100, 'must have at most 100 steps'),
});

export type ProcedureFile = z.infer<typeof procedureFileSchema>;
export type ProcedureStep = ProcedureFile['steps'][number];
export type CheckStep = Extract<ProcedureStep, { kind: (typeof CHECK_KINDS)[number] }>;
export type RingingStep = Extract<ProcedureStep, { kind: 'ringing' }>;
export type ProcedureProblem = { path: string; message: string };
export type ProcedureCheck = { ok: true; procedure: ProcedureFile; summary: string } | { ok: false; problems: ProcedureProblem[] };

/** The caution used when a schema-1 procedure's first instruction is not about safety. Part of the fixed conversion below: never edit it. */
export const STANDARD_CAUTION =
  'The unit is mains powered and may be open: follow your workplace electrical-safety rules, and mute monitor speakers and headphones before any tone is played.';

/**
 * Schema 1 → schema 2: a safety notice, then today's trim as the one trim step. The revision is
 * kept, because the steps a technician carries out are the same. The result is not checked here:
 * pass it through checkProcedureFile (a schema-1 file with, say, an unanchored serial pattern
 * upgrades to a file that says so).
 *
 * Fixed for good, field by field as docs/procedures.md ("The conversion is fixed") states it:
 * schema-1 definitions stay stored as they were and are converted here each time a run naming one
 * is read, so any change (a word of a text, the safety test, a default in procedure.ts) would
 * silently change old runs and their sheets. Never edit it. A procedure that should read otherwise
 * is a new revision in schema 2; a different conversion would be a new function under a new name,
 * applied only to definitions stored with a record of which conversion they take.
 * tests/unit/procedure-upgrade.test.ts checks the documented mapping on the definitions stored by
 * earlier releases.
 */
export function upgradeProcedure(v1: ProcedureV1): ProcedureFile {
  const { instructions, ...trim } = v1.trim;
  const first = instructions[0];
  // The schema-1 demo opens with its safety line; any other first line stays with the trim.
  const safetyFirst = /\b(safety|mute|hearing|mains|damage|danger|caution|warning|shock)\b/i.test(first);
  const notice = safetyFirst ? [first] : [STANDARD_CAUTION];
  const trimInstructions = safetyFirst ? instructions.slice(1) : instructions;
  return {
    schemaVersion: PROCEDURE_FILE_SCHEMA_VERSION,
    code: v1.code,
    revision: v1.revision,
    title: v1.title,
    invented: v1.invented,
    // Schema 1 had one channel and no field for it.
    model: { ...v1.model, channels: 1 },
    serial: { ...v1.serial },
    requiresCalibration: v1.requiresCalibration,
    steps: [
      { id: 'safety', title: 'Safety', kind: 'notice', instructions: notice, acknowledgement: 'I have read this and the bench is safe to start.' },
      {
        id: 'trim',
        title: v1.title,
        kind: 'trim',
        instructions: trimInstructions.length > 0 ? trimInstructions : ['Record trim points from the safe end toward more compensation.'],
        ...trim,
        expectedLevelDbfs: trim.expectedLevelDbfs ? { ...trim.expectedLevelDbfs } : null,
        // Schema 1 ended the run with the trim: a failed trim was the end.
        onFail: 'stop',
      },
    ],
  };
}

/** Validates a procedure file's text; schema-1 files are upgraded first. Never throws for bad input. */
export function checkProcedureFile(fileText: string): ProcedureCheck {
  const read = readJsonText(fileText);
  if (!read.ok) return { ok: false, problems: [{ path: `line ${read.line}, column ${read.column}`, message: `not valid JSON: ${read.message}` }] };
  const problems: ProcedureProblem[] = read.duplicates.map((d) => ({ path: d.path, message: `appears twice in the same object; keep one` }));
  let value: unknown = read.value;

  if (value === null || typeof value !== 'object' || Array.isArray(value)) {
    return { ok: false, problems: [{ path: '(file)', message: 'a procedure file holds one JSON object { … }' }] };
  }
  const version = (value as Record<string, unknown>).schemaVersion;
  let upgraded = false;
  if (version === SCHEMA_1) {
    const old = schema1.strict().safeParse(value);
    if (!old.success) return { ok: false, problems: [...problems, ...old.error.issues.flatMap((issue) => describeIssue(issue, value))] };
    value = upgradeProcedure(old.data);
    upgraded = true;
  } else if (typeof version === 'number' && Number.isInteger(version) && version > PROCEDURE_FILE_SCHEMA_VERSION) {
    return { ok: false, problems: [{ path: 'schemaVersion', message: `the file is schema ${version}, written for a newer Trimbench; update Trimbench to read it` }] };
  } else if (version !== PROCEDURE_FILE_SCHEMA_VERSION) {
    problems.push({ path: 'schemaVersion', message: version === undefined ? 'missing; write "schemaVersion": 2' : `expected 2 (this format) or 1 (the old one), found ${JSON.stringify(version)}` });
  }

  const parsed = procedureFileSchema.safeParse(value);
  if (!parsed.success) problems.push(...parsed.error.issues.filter((issue) => !(issue.path.length === 1 && issue.path[0] === 'schemaVersion')).flatMap((issue) => describeIssue(issue, value)));
  // Whole-file rules run on the raw value, so they are reported alongside field problems.
  problems.push(...wholeFileProblems(value as Record<string, unknown>));
  if (problems.length > 0 || !parsed.success) return { ok: false, problems: sortProblems(problems) };

  const procedure = parsed.data;
  const kinds = procedure.steps.map((s) => s.kind).join(', ');
  const summary = `${procedure.code} revision ${procedure.revision}, ${procedure.model.code} (${procedure.model.maker}), ${procedure.steps.length} step${procedure.steps.length === 1 ? '' : 's'}: ${kinds}${procedure.invented ? ' — invented values' : ''}${upgraded ? ' (upgraded from schema 1)' : ''}`;
  return { ok: true, procedure, summary };
}

const at = (value: unknown, key: string): unknown => (value !== null && typeof value === 'object' && !Array.isArray(value) ? (value as Record<string, unknown>)[key] : undefined);

function wholeFileProblems(file: Record<string, unknown>): ProcedureProblem[] {
  const problems: ProcedureProblem[] = [];
  const serial = at(file, 'serial');
  const pattern = at(serial, 'pattern');
  const example = at(serial, 'example');
  if (typeof pattern === 'string' && pattern.trim() !== '') {
    let regex: RegExp | null = null;
    try {
      regex = new RegExp(pattern);
    } catch (error) {
      // The engine's message names the fault (unterminated group, nothing to repeat, …).
      const why = (error as Error).message.replace(/^Invalid regular expression: /, '').replace(/^\/.*\/[a-z]*: /, '');
      problems.push({ path: 'serial.pattern', message: `not a valid regular expression (${why})` });
    }
    if (regex) {
      if (!pattern.startsWith('^') || !pattern.endsWith('$') || pattern.endsWith('\\$')) {
        problems.push({ path: 'serial.pattern', message: 'must match the whole serial: start it with ^ and end it with $' });
      }
      if (typeof example === 'string' && !regex.test(example)) {
        problems.push({ path: 'serial.example', message: `“${example}” does not match serial.pattern; fix one or the other` });
      }
    }
  }

  const steps = at(file, 'steps');
  if (!Array.isArray(steps)) return problems;
  const channels = at(at(file, 'model'), 'channels');
  const firstSeen = new Map<string, number>();
  let trimAt: number | null = null;
  let needsCalibration: string | null = null;
  /** The channel pairs a balance step has measured so far, as "low-high". */
  const balanced = new Set<string>();
  steps.forEach((step, index) => {
    const path = `steps[${index}]`;
    const id = at(step, 'id');
    if (typeof id === 'string') {
      const earlier = firstSeen.get(id);
      if (earlier !== undefined) problems.push({ path: `${path}.id`, message: `“${id}” is already the id of steps[${earlier}]; every step needs its own id` });
      else firstSeen.set(id, index);
    }
    const kind = at(step, 'kind');
    if (index === 0 && kind !== 'notice') problems.push({ path: `${path}.kind`, message: 'the first step must be a "notice" (safety first): what the technician must know before any tone is played' });
    if (kind === 'trim') {
      if (trimAt !== null) problems.push({ path: `${path}.kind`, message: `a procedure has at most one trim step; steps[${trimAt}] is already one` });
      else trimAt = index;
    }
    if ((TWO_CHANNEL_KINDS as readonly unknown[]).includes(kind)) {
      if (typeof channels === 'number' && channels < 2) {
        problems.push({ path: `${path}.kind`, message: `a "${kind as string}" step needs two channels, and model.channels is ${channels}; remove the step or correct model.channels` });
      } else if (typeof channels === 'number') {
        const pair = at(step, 'channels');
        if (Array.isArray(pair)) {
          pair.forEach((n, k) => {
            if (typeof n === 'number' && n > channels) problems.push({ path: `${path}.channels[${k}]`, message: `channel ${n} does not exist; model.channels is ${channels}` });
          });
        }
      }
    }
    const pairKey = (pair: unknown) => (Array.isArray(pair) && pair.length === 2 ? [...pair].sort().join('-') : null);
    if (kind === 'balance') {
      const key = pairKey(at(step, 'channels'));
      if (key) balanced.add(key);
    }
    if (kind === 'crosstalk') {
      const key = pairKey(at(step, 'channels'));
      if (key && !balanced.has(key)) {
        problems.push({
          path: `${path}.kind`,
          message: 'a "crosstalk" step must come after a "balance" step of the same two channels: the balance shows that the undriven channel\'s output reaches its input, so a quiet reading there is the unit\'s crosstalk and not a loose cable',
        });
      }
    }
    // dBu is a level at the unit's terminals: only a calibrated station can set or read it.
    if (needsCalibration === null) {
      if (at(at(step, 'level'), 'unit') === 'dBu') needsCalibration = `${path}.level`;
      else if (kind === 'gain' || kind === 'max-level') needsCalibration = `${path}.kind`;
      else {
        const limits = at(step, 'limits');
        for (const key of ['noiseDbu', 'humDbu']) if (at(limits, key) !== undefined) needsCalibration = `${path}.limits.${key}`;
      }
    }
  });
  if (needsCalibration !== null && at(file, 'requiresCalibration') === false) {
    problems.push({ path: 'requiresCalibration', message: `must be true: ${needsCalibration} is a level at the unit's terminals (dBu, or a gain from output and input levels), which only a calibrated station can measure` });
  }
  return problems;
}

/** Problems in file order: by step, then by path, so a long list reads top to bottom. */
function sortProblems(problems: ProcedureProblem[]): ProcedureProblem[] {
  const key = (p: string) => p.replace(/\[(\d+)\]/g, (_, n: string) => `[${n.padStart(4, '0')}]`);
  const seen = new Set<string>();
  return problems
    .filter((p) => {
      const k = `${p.path}\u0000${p.message}`;
      if (seen.has(k)) return false;
      seen.add(k);
      return true;
    })
    .sort((a, b) => (key(a.path) < key(b.path) ? -1 : key(a.path) > key(b.path) ? 1 : 0));
}

function pathOf(segments: readonly PropertyKey[]): string {
  let path = '';
  for (const s of segments) path = joinPath(path, typeof s === 'number' ? s : String(s));
  return path === '' ? '(file)' : path;
}

const typeName = (value: unknown) => (value === null ? 'null' : Array.isArray(value) ? 'a list' : typeof value === 'object' ? 'an object' : typeof value === 'string' ? 'text' : typeof value);
const expectedName: Record<string, string> = { number: 'a number', string: 'text in double quotes', boolean: 'true or false', object: 'an object { … }', array: 'a list [ … ]', tuple: 'a list [ … ]' };

function valueAt(root: unknown, segments: readonly PropertyKey[]): unknown {
  let v = root;
  for (const s of segments) v = v !== null && typeof v === 'object' ? (v as Record<PropertyKey, unknown>)[s] : undefined;
  return v;
}

/** One zod issue in words a line engineer reads: path first, then what is expected. */
function describeIssue(issue: z.core.$ZodIssue, root?: unknown): ProcedureProblem | ProcedureProblem[] {
  const path = pathOf(issue.path);
  switch (issue.code) {
    case 'invalid_type': {
      const found = root === undefined ? undefined : valueAt(root, issue.path);
      if (found === undefined) return { path, message: `missing; expected ${expectedName[issue.expected] ?? issue.expected}` };
      return { path, message: `expected ${expectedName[issue.expected] ?? issue.expected}, found ${typeName(found)}` };
    }
    case 'unrecognized_keys':
      // One problem per unknown field, each at its own path.
      return issue.keys.map((k) => ({ path: joinPath(path === '(file)' ? '' : path, k), message: 'unknown field; check its spelling against docs/procedures.md' }));
    case 'invalid_union': {
      // zod puts a discriminated union's issue at its discriminator (steps[3].kind, level.unit).
      const discriminator = (issue as { discriminator?: string }).discriminator;
      const found = root === undefined ? undefined : valueAt(root, issue.path);
      if (discriminator === 'kind') {
        return {
          path,
          message: found === undefined ? `missing; expected one of ${STEP_KINDS.join(', ')}` : `${JSON.stringify(found)} is not a step kind; expected one of ${STEP_KINDS.join(', ')}`,
        };
      }
      if (discriminator === 'unit') return { path, message: found === undefined ? 'missing; expected "dBFS" or "dBu"' : `expected "dBFS" or "dBu", found ${JSON.stringify(found)}` };
      return { path, message: issue.message };
    }
    case 'invalid_value': {
      const found = root === undefined ? undefined : valueAt(root, issue.path);
      if (found === undefined) return { path, message: `missing; ${issue.message}` };
      return { path, message: `${issue.message}, found ${JSON.stringify(found)}` };
    }
    case 'too_big':
    case 'too_small': {
      const found = root === undefined ? undefined : valueAt(root, issue.path);
      return { path, message: typeof found === 'number' ? `${issue.message}, found ${found}` : issue.message };
    }
    default:
      return { path, message: issue.message };
  }
}

/** For tests and documentation: the schema of each step kind. */
export const STEP_SCHEMAS = stepSchemas;
