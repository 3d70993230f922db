// The one IPC contract: a zod schema per request and response. Main parses every payload with
// it before touching the database or a file; the renderer's types are inferred from it.

import { z } from 'zod';
import type { Reading } from '../measurement/reading.ts';
import type { TrimAssessment } from '../trim/assessment.ts';
import { procedureSchema } from '../procedures/procedure.ts';
import type { IpcChannel } from './channels.ts';

const finite = z.number();
const rowId = z.number().int().positive();

const dbLevel = finite;

export const readingSchema = z.object({
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
  mainsCoincidentOrders: z.array(z.number().int().min(2)).max(64).default([]),
  flags: z.array(z.enum(['no-signal', 'clipping', 'at-floor', 'mains-coincident'])),
});
// The schema must describe exactly what the worker produces.
readingSchema satisfies z.ZodType<Reading>;

export const stationSchema = z.object({
  stationName: z.string(),
  databasePath: z.string(),
  sheetsFolder: z.string(),
});

export const storedProcedureSchema = z.object({ id: rowId, definition: procedureSchema });

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
  /** Why a run failed (the limit missed, or left past the null). */
  verdictReason: z.string().nullable(),
  finalThdDb: finite.nullable(),
  limitThdDb: finite,
  sheetPdfPath: z.string().nullable(),
});

export const trimPointSchema = z.object({
  id: rowId,
  sequence: z.number().int().positive(),
  position: finite,
  recordedAt: z.string(),
  settled: z.boolean(),
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

export const runDetailSchema = z.object({
  run: runSchema,
  trimPoints: z.array(trimPointSchema),
  /** The assistant's assessment after the latest point. */
  assessment: trimAssessmentSchema.nullable(),
  /** Every warning raised during the run, with the point after which it was first raised. */
  warningsRaised: z.array(warningSchema.extend({ afterSequence: z.number().int() })),
  warmCheck: warmCheckSchema.nullable(),
  /** Earlier finished runs of the same serial (retests are new runs). */
  earlierRuns: z.number().int().nonnegative(),
});

const runRef = z.object({ runId: rowId }).strict();
const nothing = z.object({}).strict();

export const contract = {
  describeStation: { request: nothing, response: stationSchema },
  listProcedures: { request: nothing, response: z.array(storedProcedureSchema) },
  openRun: {
    request: z
      .object({
        serial: z.string().min(1).max(64),
        procedureId: rowId,
        operator: z.string().trim().min(1, 'Enter the operator name.').max(60),
      })
      .strict(),
    response: runDetailSchema,
  },
  recordTrimPoint: {
    request: z
      .object({
        runId: rowId,
        position: finite,
        reading: readingSchema,
        /** Live readings since the trimmer last moved, for the warnings that need a series. */
        live: z.object({ levelsDbfs: z.array(finite).max(600), lfDbfs: z.array(finite).max(600) }).strict().nullable(),
      })
      .strict(),
    response: z.object({ point: trimPointSchema, assessment: trimAssessmentSchema }),
  },
  recordWarmCheck: {
    request: z
      .object({
        runId: rowId,
        coldTemperatureC: finite.min(-40).max(150),
        warmTemperatureC: finite.min(-40).max(150),
        reading: readingSchema,
      })
      .strict(),
    response: warmCheckSchema,
  },
  finishRun: { request: runRef, response: runDetailSchema },
  saveSheetPdf: { request: runRef, response: z.object({ path: z.string(), alreadySaved: z.boolean() }) },
  printSheet: { request: runRef, response: z.object({ printed: z.boolean() }) },
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
