// The one IPC contract: a zod schema per request and response. Main parses every payload with
// it before touching the database or a file; the renderer's types are inferred from it.

import { z } from 'zod';
import type { Reading } from '../measurement/reading.ts';
import type { TrimAssessment } from '../trim/assessment.ts';
import { procedureSchema } from '../procedures/procedure.ts';
import { MAX_LEVEL_RANGES, procedureFileSchema, STEP_KINDS } from '../procedures/procedure-file.ts';
import type { Measurement } from '../procedures/check-steps.ts';
import type { ResponseCurve } from '../procedures/response.ts';
import { SWEEP_CAPTURE_MAX_SAMPLES } from '../measurement/sweep-response.ts';
import type { UnitJudgement } from '../procedures/unit-verdict.ts';
import { EDGE_PLOT_MAX_POINTS, SCOPE_TEXT_MAX, type ScopeRecordSummary } from '../procedures/ringing.ts';
import { RINGING_FLAGS } from '../scope/ringing.ts';
import type { IpcChannel } from './channels.ts';
import { plainText } from './plain-text.ts';
import {
  audioSetupSchema,
  calibrationRequestSchema,
  calibrationSchema,
  calibrationUsedSchema,
  chainCheckRecordSchema,
  chainCheckResultSchema,
  stationCalibrationSchema,
  stationSettingsSchema,
} from './calibration-schemas.ts';

// zod's own message for unknown fields quotes every key in full: a payload of 10^5 long keys would
// come back as megabytes of error. Name a few, shortened, and count the rest.
z.config({
  customError: (issue) => {
    if (issue.code !== 'unrecognized_keys') return undefined;
    const keys: string[] = issue.keys;
    const shown = keys.slice(0, 3).map((key) => JSON.stringify(key.length > 32 ? `${key.slice(0, 32)}…` : key));
    const more = keys.length > shown.length ? ` and ${keys.length - shown.length} more` : '';
    return `Unexpected field${keys.length > 1 ? 's' : ''} ${shown.join(', ')}${more}: remove ${keys.length > 1 ? 'them' : 'it'}.`;
  },
});

const finite = z.number();
const rowId = z.number().int().positive();

const dbLevel = finite;

// Bounds on what a reading from the page may hold. Every number has a physical range, so a value
// outside it was not produced by the meter; a list or text has a length, so one payload cannot make
// main parse megabytes. Stored readings are read back with the lenient readingSchema below.
/** Sample rates an audio interface offers: 8 kHz telephony to 768 kHz (common practice). */
export const SAMPLE_RATE_MIN_HZ = 8_000;
export const SAMPLE_RATE_MAX_HZ = 768_000;
/** Longest analysis frame: 2^24 samples is 35 min at 8 kHz, far beyond a 10 Hz frame's needs. */
export const FRAME_SIZE_MAX = 2 ** 24;
/** Harmonic orders counted (THD to H64 at most; the default is H10). */
export const HARMONIC_ORDER_MAX = 64;
/** The fundamental may sit above the AES17 full-scale sine (0 dBFS) only by a square wave's +3 dB and a margin. */
export const FUNDAMENTAL_MAX_DBFS = 6;
/** Level range: below the meter's −300 dB floor with margin, above any unit's distortion by far. */
export const LEVEL_MIN_DB = -400;
export const DBC_MAX = 40;
/** A THD of +40 dB is 10 000 %: harmonics 100 times the fundamental, nothing a meter reports for a stage. */
export const THD_MAX_DB = DBC_MAX;
export const THD_MAX_PERCENT = 100 * 10 ** (THD_MAX_DB / 20);
export const MAX_READING_FLAGS = 8;
export const MAX_OPERATOR_CHARS = 60;

const dbfs = finite.min(LEVEL_MIN_DB).max(FUNDAMENTAL_MAX_DBFS);
const dbc = finite.min(LEVEL_MIN_DB).max(DBC_MAX);
/** A phase relative to the fundamental, wrapped to (−180°, 180°] as the meter reports it. */
const phaseDeg = finite.gt(-180).lte(180);
const frequencyHz = finite.nonnegative().max(SAMPLE_RATE_MAX_HZ / 2);
const harmonicOrder = z.number().int().min(2).max(HARMONIC_ORDER_MAX);

const unique = <T>(items: readonly T[]) => new Set(items).size === items.length;

const fields = {
  sequence: z.number().int().nonnegative(),
  sampleRateHz: finite.positive(),
  frameSize: z.number().int().positive(),
  discontinuities: z.number().int().nonnegative(),
  settled: z.boolean(),
  settleProgress: finite.min(0).max(1),
  // Readings stored before these fields existed parse with what they would have said.
  settleRemainingS: finite.nonnegative().nullable().default(null),
  subAudioDbfs: dbLevel.nullable(),
  mode: z.enum(['coherent', 'windowed']),
  fundamental: z.object({ frequencyHz: finite.nonnegative(), levelDbfs: dbLevel, phaseDeg: finite }),
  measuredFundamentalHz: finite.nonnegative().optional(),
  harmonics: z
    .array(z.object({ order: z.number().int().min(2), frequencyHz: finite.nonnegative(), levelDbc: dbLevel, phaseDeg: finite }))
    .max(64),
  harmonicsAboveNyquist: z.array(z.number().int().min(2)).max(64),
  thdPercent: finite.nonnegative(),
  thdDb: dbLevel,
  thdnPercent: finite.nonnegative(),
  thdnDb: dbLevel,
  sinadDb: finite,
  enob: finite,
  noiseDbfs: dbLevel,
  noiseAWeightedDbfs: dbLevel,
  hum: z
    .object({
      frequencyHz: finite.nonnegative(),
      levelDbfs: dbLevel,
      components: z.array(z.object({ order: z.number().int().min(1), frequencyHz: finite.nonnegative(), levelDbfs: dbLevel })).max(8),
    })
    .nullable(),
  // Readings stored before the meter reported how it looked for hum give no bound for it.
  humSearch: z
    .object({ mainsHz: z.union([z.literal(50), z.literal(60)]), orders: z.array(z.number().int().min(1)).max(8), thresholdDbfs: dbLevel })
    .nullable()
    .default(null),
  // Readings stored before the band was kept were all summed over the meter's 20 Hz–20 kHz.
  bandHz: z.object({ lowHz: finite.nonnegative(), highHz: finite.nonnegative() }).default({ lowHz: 20, highHz: 20000 }),
  mainsCoincidentOrders: z.array(z.number().int().min(2)).max(64).default([]),
  flags: z.array(z.enum(['no-signal', 'clipping', 'at-floor', 'mains-coincident'])),
};

// Readings stored before the frequency found was kept apart: their fundamental's is all there is.
const withMeasuredFundamental = <R extends { measuredFundamentalHz?: number; fundamental: { frequencyHz: number } }>({
  measuredFundamentalHz,
  ...reading
}: R) => ({ ...reading, measuredFundamentalHz: measuredFundamentalHz ?? reading.fundamental.frequencyHz });

/** A reading as stored: read back leniently, so a record written under older rules still opens. */
export const readingSchema = z.object(fields).transform(withMeasuredFundamental);

/** A reading as the page sends it: every field bounded, checked before main stores or judges anything. */
export const boundedReadingSchema = z
  .object({
    ...fields,
    sampleRateHz: finite.min(SAMPLE_RATE_MIN_HZ).max(SAMPLE_RATE_MAX_HZ),
    frameSize: z.number().int().min(16).max(FRAME_SIZE_MAX),
    discontinuities: z.number().int().nonnegative().max(1_000_000),
    settleRemainingS: finite.nonnegative().max(3600).nullable().default(null),
    subAudioDbfs: dbfs.nullable(),
    fundamental: z.object({ frequencyHz, levelDbfs: dbfs, phaseDeg }).strict(),
    measuredFundamentalHz: frequencyHz.optional(),
    harmonics: z
      .array(z.object({ order: harmonicOrder, frequencyHz, levelDbc: dbc, phaseDeg }).strict())
      .max(HARMONIC_ORDER_MAX - 1)
      .refine((hs) => unique(hs.map((h) => h.order)), 'Each harmonic order may appear once.'),
    harmonicsAboveNyquist: z
      .array(harmonicOrder)
      .max(HARMONIC_ORDER_MAX - 1)
      .refine(unique, 'Each harmonic order may appear once.'),
    thdPercent: finite.nonnegative().max(THD_MAX_PERCENT),
    thdDb: dbc.max(THD_MAX_DB),
    thdnPercent: finite.nonnegative().max(THD_MAX_PERCENT),
    thdnDb: dbc.max(THD_MAX_DB),
    sinadDb: finite.min(-THD_MAX_DB).max(-LEVEL_MIN_DB),
    enob: finite.min(-100).max(100),
    noiseDbfs: dbfs,
    noiseAWeightedDbfs: dbfs,
    hum: z
      .object({
        frequencyHz,
        levelDbfs: dbfs,
        components: z.array(z.object({ order: z.number().int().min(1).max(HARMONIC_ORDER_MAX), frequencyHz, levelDbfs: dbfs }).strict()).max(8),
      })
      .strict()
      .nullable(),
    humSearch: z
      .object({
        mainsHz: z.union([z.literal(50), z.literal(60)]),
        orders: z.array(z.number().int().min(1).max(8)).max(8).refine(unique, 'Each mains order may appear once.'),
        thresholdDbfs: dbfs,
      })
      .strict()
      .nullable()
      .default(null),
    bandHz: z.object({ lowHz: frequencyHz, highHz: frequencyHz }).strict().refine((b) => b.lowHz < b.highHz, 'The band must end above where it starts.'),
    mainsCoincidentOrders: z
      .array(harmonicOrder)
      .max(HARMONIC_ORDER_MAX - 1)
      .refine(unique, 'Each harmonic order may appear once.')
      .default([]),
    flags: fields.flags.max(MAX_READING_FLAGS).refine(unique, 'Each flag may appear once.'),
  })
  .strict()
  // Nyquist: a tone at or above half the sample rate cannot have been measured at that rate.
  .superRefine((reading, ctx) => {
    const nyquistHz = reading.sampleRateHz / 2;
    const above = (hz: number) => hz >= nyquistHz;
    if (above(reading.fundamental.frequencyHz) || (reading.measuredFundamentalHz !== undefined && above(reading.measuredFundamentalHz))) {
      ctx.addIssue({ code: 'custom', path: ['fundamental', 'frequencyHz'], message: `The fundamental is at or above Nyquist (${nyquistHz} Hz).` });
    }
    const harmonic = reading.harmonics.find((h) => above(h.frequencyHz));
    if (harmonic) {
      ctx.addIssue({ code: 'custom', path: ['harmonics'], message: `H${harmonic.order} is at or above Nyquist (${nyquistHz} Hz): list it as above Nyquist.` });
    }
    if (reading.bandHz.highHz > nyquistHz) {
      ctx.addIssue({ code: 'custom', path: ['bandHz', 'highHz'], message: `The band ends above Nyquist (${nyquistHz} Hz).` });
    }
    if (reading.hum?.components.some((c) => above(c.frequencyHz))) {
      ctx.addIssue({ code: 'custom', path: ['hum', 'components'], message: `A hum component is at or above Nyquist (${nyquistHz} Hz).` });
    }
  })
  .transform(withMeasuredFundamental);
// The schema must describe exactly what the worker produces.
readingSchema satisfies z.ZodType<Reading>;
boundedReadingSchema satisfies z.ZodType<Reading>;

export const stationSchema = z.object({
  stationName: z.string(),
  databasePath: z.string(),
  sheetsFolder: z.string(),
  /** Why nothing can be recorded at this station (a damaged or unwritable database), or null. */
  recordsProblem: z.string().nullable(),
});

export const storedProcedureSchema = z.object({ id: rowId, definition: procedureSchema });

/** One stored revision of a procedure, whole (a schema-1 one as its upgrade), and how many runs name it. */
export const procedureRevisionSchema = z.object({
  id: rowId,
  code: z.string(),
  revision: z.string(),
  modelCode: z.string(),
  /** The revision new runs of this procedure use: the newest stored. */
  current: z.boolean(),
  file: procedureFileSchema,
  runs: z.number().int().nonnegative(),
});

export const runSchema = z.object({
  id: rowId,
  serial: z.string(),
  procedureId: rowId,
  procedureCode: z.string(),
  procedureRevision: z.string(),
  procedureTitle: z.string(),
  invented: z.boolean(),
  modelCode: z.string(),
  modelName: z.string(),
  operator: z.string(),
  station: z.string(),
  startedAt: z.string(),
  finishedAt: z.string().nullable(),
  verdict: z.enum(['pass', 'fail']).nullable(),
  /** Why a run failed, as one text (kept for runs finished before verdictReasons). */
  verdictReason: z.string().nullable(),
  /** Why a run failed, one plain sentence each; empty on a pass. */
  verdictReasons: z.array(z.string()),
  finalThdDb: finite.nullable(),
  limitThdDb: finite,
  sheetPdfPath: z.string().nullable(),
  /** The run this one repeats (a retest), and why; null for a first test. */
  retestOf: rowId.nullable().default(null),
  retestReason: z.string().nullable().default(null),
  /** The lot or work order the unit was built under, as the technician entered it; null when none. */
  lot: z.string().nullable().default(null),
  /** Opened since step results were recorded: false for a run from before, judged on its trim alone. */
  walked: z.boolean().default(true),
});

export const trimPointSchema = z.object({
  id: rowId,
  sequence: z.number().int().positive(),
  position: finite,
  recordedAt: z.string(),
  /** False: recorded deliberately before the reading settled (marked everywhere). */
  settled: z.boolean(),
  /** In the fit and the verdict: settled points, and unsettled ones the technician confirmed. */
  inFit: z.boolean(),
  /** When the technician confirmed an unsettled point into the fit; null otherwise. */
  confirmedAt: z.string().nullable(),
  /** The generator's frequency for this point; null for points stored before it was recorded. */
  stimulusHz: finite.nullable(),
  reading: readingSchema,
});

export const warningSchema = z.object({
  id: z.enum(['gain-rise', 'lf-instability', 'amplitude-wander', 'clipping', 'past-null']),
  seen: z.string(),
  advice: z.string(),
});

export const trimAssessmentSchema = z.object({
  harmonicOrder: z.number().int(),
  model: z.enum(['phasor', 'magnitude']).nullable(),
  reason: z.string(),
  fitProblem: z.string().nullable().default(null),
  nullPosition: finite.nullable(),
  nullPositionPlusMinus: finite.nullable(),
  nullLevelDbc: finite.nullable(),
  bracketed: z.boolean(),
  side: z.enum(['short-of-null', 'past-null']).nullable(),
  nextPosition: finite,
  recommendedPosition: finite.nullable(),
  recommendedLevelDbc: finite.nullable(),
  recommendationNote: z.string().nullable(),
  thermalMarginC: finite.nullable(),
  excludedPoint: z.number().int().nullable(),
  warnings: z.array(warningSchema),
  curve: z.array(z.object({ position: finite, levelDbc: finite })).max(200),
});
trimAssessmentSchema satisfies z.ZodType<TrimAssessment>;

export const warmCheckSchema = z.object({
  recordedAt: z.string(),
  position: finite,
  coldTemperatureC: finite,
  warmTemperatureC: finite,
  coldLevelDbc: finite,
  warmLevelDbc: finite,
  /** 0..1: how much of the drift an untracked winding would show the unit's own tracking removed. */
  trackingFraction: finite.min(0).max(1),
  measuredDrift: finite.nonnegative(),
  untrackedDrift: finite.nonnegative(),
});

const warningIdSchema = warningSchema.shape.id;

/** One raised or cleared warning: from main's successive assessments or the page's live watch. */
export const warningLogEntrySchema = z.object({
  id: warningIdSchema,
  change: z.enum(['raised', 'cleared']),
  /** ISO 8601 with its zone. */
  at: z.string(),
  position: finite,
  /** The trim point after which it happened (0: before the first). */
  afterSequence: z.number().int().nonnegative(),
  seen: z.string(),
  source: z.enum(['assessment', 'live']),
});

/** One measured quantity of a step with the limits as they were when it was judged (check-steps.ts). */
export const measurementSchema = z.object({
  quantity: z.string(),
  value: finite.nullable(),
  unit: z.string(),
  low: finite.nullable(),
  high: finite.nullable(),
  verdict: z.enum(['pass', 'fail']),
  note: z.string().nullable(),
});
measurementSchema satisfies z.ZodType<Measurement>;

/** The generator as it was when the reading was taken (the page holds it; main judges it). */
const stimulusSettingSchema = z
  .object({
    on: z.boolean(),
    frequencyHz: finite.positive().max(200_000),
    levelDbfs: finite.min(-200).max(0),
    /** Absent on every setting stored before the square wave, which were all sines. */
    waveform: z.enum(['sine', 'square']).optional(),
  })
  .strict();

/**
 * What a ringing step stores beside its measurements: the scope file it was judged from and one edge
 * with its fitted envelope for the plot (shared/procedures/ringing.ts). Bounded as stored by main.
 */
export const scopeRecordSchema = z.object({
  fileName: z.string().max(SCOPE_TEXT_MAX.fileName),
  channel: z.number().int().nonnegative(),
  channelName: z.string().max(SCOPE_TEXT_MAX.channelName),
  edges: z.number().int().nonnegative(),
  squareHz: finite.positive(),
  sampleIntervalS: finite.positive(),
  flags: z.array(z.enum(RINGING_FLAGS)).max(RINGING_FLAGS.length),
  plot: z.object({
    polarity: z.enum(['rising', 'falling']),
    timeS: z.array(finite).max(EDGE_PLOT_MAX_POINTS),
    values: z.array(finite).max(EDGE_PLOT_MAX_POINTS),
    unit: z.string().max(SCOPE_TEXT_MAX.unit),
    finalLevelV: finite,
    stepV: finite,
    envelope: z.object({ amplitudePercent: finite, decayPerS: finite }).nullable(),
    envelopeFromS: finite.nullable(),
  }),
});
scopeRecordSchema satisfies z.ZodType<ScopeRecordSummary>;

/**
 * One recorded result of a procedure step in a run: an acknowledged notice, the trim as judged when
 * the technician completed it, or a check step's measurements. A step repeated before the run is
 * finished has several; the latest counts (unit-verdict.ts).
 */
export const stepResultSchema = z.object({
  id: rowId,
  stepId: z.string(),
  kind: z.enum(STEP_KINDS),
  /** 1 the first time the step was recorded in the run, 2 for its first repeat, and so on. */
  attempt: z.number().int().positive(),
  recordedAt: z.string(),
  verdict: z.enum(['pass', 'fail']),
  /** Why it failed, one plain sentence each; empty on a pass. */
  reasons: z.array(z.string()),
  measurements: z.array(measurementSchema),
  /** The generator while a check step was measured; null for a notice and the trim. */
  stimulus: stimulusSettingSchema.nullable(),
  /** For a ringing step: the scope record it was judged from; absent or null otherwise. */
  scopeRecord: scopeRecordSchema.nullable().optional(),
  /** A response step's analysed response, as stored with it, for its plot; absent for other kinds. */
  curve: z.lazy(() => responseCurveSchema).optional(),
});

export const unitJudgementSchema = z.object({
  verdict: z.enum(['pass', 'fail']),
  finished: z.boolean(),
  stoppedAt: z.string().nullable(),
  nextStepId: z.string().nullable(),
  steps: z.array(z.object({ stepId: z.string(), title: z.string(), kind: z.enum(STEP_KINDS), status: z.enum(['pass', 'fail', 'not-run']) })),
  reasons: z.array(z.string()),
});
unitJudgementSchema satisfies z.ZodType<UnitJudgement>;

export const runDetailSchema = z.object({
  run: runSchema,
  trimPoints: z.array(trimPointSchema),
  /** The assistant's assessment after the latest point. */
  assessment: trimAssessmentSchema.nullable(),
  /** Every warning raised during the run, with the point after which it was first raised. */
  warningsRaised: z.array(warningSchema.extend({ afterSequence: z.number().int() })),
  /** Every raise and clear of a warning during the run, in order. */
  warningLog: z.array(warningLogEntrySchema),
  warmCheck: warmCheckSchema.nullable(),
  /** Earlier finished runs of the same serial (retests are new runs). */
  earlierRuns: z.number().int().nonnegative(),
  /** The station calibration the run was measured with; null when the station had none valid. */
  calibration: calibrationUsedSchema.nullable(),
  /** The procedure revision the run uses, as the trim runs it: travels with the run, whichever revision is newest. */
  procedure: procedureSchema,
  /** The same revision whole, every step (a schema-1 procedure upgraded to its notice and trim steps). */
  procedureFile: procedureFileSchema,
  /** Every step result recorded in the run, in the order recorded. */
  stepResults: z.array(stepResultSchema),
  /** The unit's verdict over the steps as main judges it now from the stored results (judgeUnit). */
  judgement: unitJudgementSchema,
});

/** A response step's curve as stored (shared/procedures/response.ts ResponseCurve). */
export const responseCurveSchema = z
  .object({
    referenceHz: finite.positive(),
    latencySamples: z.number().int().min(0),
    sampleRateHz: z.number().int().positive(),
    corrected: z.boolean(),
    uncorrectedReason: z.string().nullable(),
    response: z.array(z.tuple([finite.positive(), finite, finite.min(-180).max(180)])).max(400),
    harmonics: z.array(z.object({ order: z.number().int().min(2).max(5), points: z.array(z.tuple([finite.positive(), finite])).max(400) }).strict()).max(4),
  })
  .strict();
responseCurveSchema satisfies z.ZodType<ResponseCurve>;

const runRef = z.object({ runId: rowId }).strict();
/** A step of the run's procedure, by its id (procedure-file.ts allows at most 40 characters). */
const stepRef = z.object({ runId: rowId, stepId: z.string().min(1).max(40) }).strict();
export const MAX_LOT_CHARS = 40;

/** Bounds on what the page may report at once: a burst of changes, each with a short description. */
export const MAX_WARNING_CHANGES_PER_CALL = 32;
export const MAX_WARNING_SEEN_CHARS = 400;

const warningChangeSchema = z
  .object({
    id: warningIdSchema,
    change: z.enum(['raised', 'cleared']),
    position: finite.min(-1e6).max(1e6),
    seen: z.string().min(1).pipe(plainText('warning description', MAX_WARNING_SEEN_CHARS)),
  })
  .strict();

const recordedPointResponse = z.object({
  point: trimPointSchema,
  assessment: trimAssessmentSchema,
  warningLog: z.array(warningLogEntrySchema),
  /** The run as main now holds it after the point: the page keeps no copy of its own. */
  detail: runDetailSchema,
});
const nothing = z.object({}).strict();

export const contract = {
  describeStation: { request: nothing, response: stationSchema },
  listProcedures: { request: nothing, response: z.array(storedProcedureSchema) },
  /** Every stored revision of every procedure, each whole, for the procedures view. */
  listProcedureRevisions: { request: nothing, response: z.array(procedureRevisionSchema) },
  openRun: {
    request: z
      .object({
        serial: z.string().min(1).max(64),
        procedureId: rowId,
        operator: z.string().max(MAX_OPERATOR_CHARS * 4, `The operator name is longer than ${MAX_OPERATOR_CHARS} characters: shorten it.`).trim().min(1, 'Enter the operator name.').pipe(plainText('operator name', MAX_OPERATOR_CHARS)),
        /** The audio setup in use (null without capture): a calibration holds only for the setup it was made with. */
        setup: audioSetupSchema.nullable().default(null),
        /** Required when the unit was tested before under this procedure: why it is tested again. */
        retestReason: z.string().trim().min(1, 'Give the reason for the retest.').pipe(plainText('retest reason', 200)).optional(),
        /** The lot or work order the unit was built under; optional. */
        lot: z.string().trim().pipe(plainText('lot or work order', MAX_LOT_CHARS)).optional(),
      })
      .strict(),
    response: runDetailSchema,
  },
  lookUpUnit: {
    request: z.object({ serial: z.string().trim().min(1, 'Enter a serial number.').max(64) }).strict(),
    response: z
      .object({
        serial: z.string(),
        modelCode: z.string(),
        runs: z.array(
          z.union([
            z.object({ run: runSchema, finalPosition: finite.nullable(), points: z.number().int().nonnegative(), unreadable: z.null() }),
            z.object({ run: z.null(), runId: rowId, finalPosition: z.null(), points: z.literal(0), unreadable: z.string() }),
          ]),
        ),
      })
      .nullable(),
  },
  recordTrimPoint: {
    request: z
      .object({
        runId: rowId,
        position: finite.min(-1e6).max(1e6),
        reading: boundedReadingSchema,
        /** Live readings since the trimmer last moved, for the warnings that need a series. */
        live: z.object({ levelsDbfs: z.array(dbfs).max(600), lfDbfs: z.array(dbfs).max(600) }).strict().nullable(),
        stimulus: stimulusSettingSchema,
        /** 'record-marked' is the deliberate, distinct action for a reading that has not settled. */
        unsettled: z.enum(['refuse', 'record-marked']).default('refuse'),
        /** The audio setup in use: main checks it against the run's calibration. */
        setup: audioSetupSchema.nullable().default(null),
      })
      .strict(),
    response: recordedPointResponse,
  },
  includeUnsettledPoint: {
    request: z.object({ runId: rowId, pointId: rowId }).strict(),
    response: recordedPointResponse,
  },
  logWarningChanges: {
    request: z.object({ runId: rowId, changes: z.array(warningChangeSchema).min(1).max(MAX_WARNING_CHANGES_PER_CALL) }).strict(),
    response: z.object({ warningLog: z.array(warningLogEntrySchema) }),
  },
  recordWarmCheck: {
    request: z
      .object({
        runId: rowId,
        coldTemperatureC: finite.min(-40).max(150),
        warmTemperatureC: finite.min(-40).max(150),
        reading: boundedReadingSchema,
        /** The generator when the warm reading was taken: judged as for a trim point. */
        stimulus: stimulusSettingSchema,
      })
      .strict(),
    response: warmCheckSchema,
  },
  /** The technician acknowledged a notice step (safety first): its result is a pass. */
  acknowledgeNotice: { request: stepRef, response: runDetailSchema },
  /** The technician is done trimming: main judges the trim from the stored points (judgeTrimRun) as the trim step's result. */
  completeTrim: { request: stepRef, response: runDetailSchema },
  /** A check step's settled reading(s): main judges them with measureCheckStep against the stored revision's limits. */
  recordCheckStep: {
    request: z
      .object({
        runId: rowId,
        stepId: z.string().min(1).max(40),
        stimulus: stimulusSettingSchema,
        /** One reading for a one-channel step; one per channel for balance and crosstalk. */
        readings: z
          .array(z.object({ channel: z.number().int().min(1).max(16), reading: boundedReadingSchema }).strict())
          .min(1)
          .max(2)
          .refine((rs) => unique(rs.map((r) => r.channel)), 'Each channel may appear once.'),
        /** The audio setup in use: main checks it against the run's calibration and reads channel 2's input figure by it. */
        setup: audioSetupSchema.nullable().default(null),
      })
      .strict(),
    response: runDetailSchema,
  },
  /**
   * A ringing step: main asks for the scope's CSV file in its own dialog, reads it, and judges it
   * against the stored revision's limits (shared/procedures/ringing.ts). The page sends no figures.
   */
  attachScopeCapture: {
    request: stepRef,
    response: z.object({ outcome: z.enum(['recorded', 'cancelled']), detail: runDetailSchema }),
  },
  /**
   * A max-level step's whole sequence, each level's generator setting with its reading, in the
   * order played: main re-runs the step's rules on every reading (judgeMaxLevel) and computes the
   * crossing itself.
   */
  recordMaxLevel: {
    request: z
      .object({
        runId: rowId,
        stepId: z.string().min(1).max(40),
        points: z
          .array(z.object({ stimulus: stimulusSettingSchema, reading: boundedReadingSchema }).strict())
          .min(1)
          .max(MAX_LEVEL_RANGES.steps.max),
        /** The audio setup in use: main checks it against the run's calibration. */
        setup: audioSetupSchema.nullable().default(null),
      })
      .strict(),
    response: runDetailSchema,
  },
  /**
   * A response step's capture of its sweep: main analyses it (analyzeSweepResponse) with the sweep of
   * the stored revision's step, never one the page describes, and judges the mask and harmonics.
   */
  recordResponse: {
    request: z
      .object({
        runId: rowId,
        stepId: z.string().min(1).max(40),
        /** The rate the capture ran at; the sweep was played at the same rate. */
        sampleRateHz: z.number().int().min(8000).max(384000),
        /** The unit's channel 1 over the whole sweep, from before it starts (plain numbers: they cross any bridge). */
        // One pass over the samples, stopping at the first bad one: element schemas would build an
        // issue for each of millions of NaNs and hold main for seconds.
        samples: z
          .array(z.unknown())
          .min(1)
          .max(SWEEP_CAPTURE_MAX_SAMPLES)
          .refine((a): a is number[] => a.every((v) => typeof v === 'number' && Number.isFinite(v)), 'every sample must be a finite number'),
        setup: audioSetupSchema.nullable().default(null),
      })
      .strict(),
    response: runDetailSchema,
  },
  finishRun: {
    request: z.object({ runId: rowId, asFailure: z.boolean().optional() }).strict(),
    response: runDetailSchema,
  },
  saveSheetPdf: { request: runRef, response: z.object({ path: z.string(), alreadySaved: z.boolean() }) },
  printSheet: { request: runRef, response: z.object({ printed: z.boolean() }) },
  getStationCalibration: { request: nothing, response: stationCalibrationSchema },
  saveStationSettings: { request: stationSettingsSchema, response: stationCalibrationSchema },
  recordCalibration: { request: calibrationRequestSchema, response: stationCalibrationSchema },
  recordChainCheck: {
    request: z
      .object({
        calibrationId: rowId,
        operator: z.string().trim().min(1, 'Enter the operator name.').pipe(plainText('operator name', MAX_OPERATOR_CHARS)),
        result: chainCheckResultSchema,
      })
      .strict(),
    response: stationCalibrationSchema,
  },
  importProcedure: {
    request: nothing,
    response: z.object({
      outcome: z.enum(['stored', 'unchanged', 'cancelled']),
      id: rowId.optional(),
      code: z.string().nullable(),
      revision: z.string().nullable(),
      summary: z.string().nullable(),
    }),
  },
  listCalibrations: {
    request: nothing,
    response: z.array(z.object({ calibration: calibrationSchema, chainChecks: z.array(chainCheckRecordSchema) })),
  },
} satisfies Record<IpcChannel, { request: z.ZodType; response: z.ZodType }>;

export type IpcRequest<C extends IpcChannel> = z.input<(typeof contract)[C]['request']>;
export type IpcResponse<C extends IpcChannel> = z.output<(typeof contract)[C]['response']>;

/** Errors cross the boundary as plain data, never as thrown objects. */
export interface IpcError {
  name: string;
  message: string;
}
export type IpcResult<T> = { ok: true; value: T } | { ok: false; error: IpcError };

/** What the preload (or the test harness) puts on window.trimbench. */
export type TrimbenchBridge = { [C in IpcChannel]: (request: IpcRequest<C>) => Promise<IpcResult<IpcResponse<C>>> };

export type Station = z.infer<typeof stationSchema>;
export type StoredProcedure = z.infer<typeof storedProcedureSchema>;
export type Run = z.infer<typeof runSchema>;
export type TrimPoint = z.infer<typeof trimPointSchema>;
export type RunDetail = z.infer<typeof runDetailSchema>;
export type WarmCheck = z.infer<typeof warmCheckSchema>;
export type WarningLogEntry = z.infer<typeof warningLogEntrySchema>;
export type StimulusSettingRequest = z.infer<typeof stimulusSettingSchema>;
export type StationCalibration = z.infer<typeof stationCalibrationSchema>;
export type StepResult = z.infer<typeof stepResultSchema>;
export type ProcedureRevision = z.infer<typeof procedureRevisionSchema>;
export type StoredMeasurement = z.infer<typeof measurementSchema>;
