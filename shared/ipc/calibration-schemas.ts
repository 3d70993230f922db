// The contract's schemas for station settings, level calibration and the chain check. Every
// number has a physical range and every list a length, as for readings: main judges only what fits.

import { z } from 'zod';
import { CHAIN_CHECK_SCHEMA_VERSION, type ChainCheckJudgement, type ChainCheckResult, type ChainLimits } from '../calibration/chain-check.ts';
import type { AudioSetup, Calibration, CalibrationUsed, ChainCheckRecord } from '../calibration/station-calibration.ts';
import type { StationSettings } from '../calibration/station-settings.ts';
import { plainText } from './plain-text.ts';

const finite = z.number();
const rowId = z.number().int().positive();
const hz = finite.positive().max(400_000);
const dbfs = finite.min(-400).max(6);
const db = finite.min(-400).max(40);
const dbuAtFullScale = finite.min(-40).max(40);
const isoTime = z.string().max(40).refine((text) => !Number.isNaN(Date.parse(text)), 'Expected a date and time (ISO 8601).');

export const audioSetupSchema = z
  .object({
    inputDeviceId: z.string().max(512),
    inputDeviceLabel: plainText('input device name', 200),
    inputChannel: z.number().int().min(0).max(63),
    secondInputChannel: z.number().int().min(0).max(63).nullable().optional(),
    outputDeviceId: z.string().max(512),
    outputDeviceLabel: plainText('output device name', 200),
    sampleRateHz: z.number().int().min(8000).max(768_000),
  })
  .strict()
  .refine((setup) => setup.secondInputChannel == null || setup.secondInputChannel !== setup.inputChannel, {
    message: 'The two channels of a unit must come in on two different inputs.',
    path: ['secondInputChannel'],
  });
audioSetupSchema satisfies z.ZodType<AudioSetup>;

export const chainLimitsSchema = z
  .object({
    residualThdnAt1kHzMaxDb: db,
    residualThdMaxDb: db,
    residualThdLowFrequencyMaxDb: db,
    lowFrequencyBelowHz: hz,
    noiseUnweightedMaxDbfs: dbfs,
    noiseAWeightedMaxDbfs: dbfs,
    noiseAWeightedMaxDbu: finite.min(-200).max(40).nullable(),
    flatnessDb: finite.positive().max(20),
    flatnessBandLowHz: hz,
    flatnessBandHighHz: hz,
    requireLatency: z.boolean(),
  })
  .strict()
  .refine((limits) => limits.flatnessBandLowHz < limits.flatnessBandHighHz, {
    message: 'The flatness band must start below where it ends.',
    path: ['flatnessBandHighHz'],
  });
chainLimitsSchema satisfies z.ZodType<ChainLimits>;

export const stationSettingsSchema = z
  .object({
    stationName: z.string().trim().min(1, 'Enter the station name.').pipe(plainText('station name', 64)),
    mainsHz: z.union([z.literal(50), z.literal(60)]),
    /** The audio setup the station starts with; null until one is saved. */
    defaultAudio: audioSetupSchema.nullable(),
    calibrationExpiryDays: z.number().int().min(1, 'A calibration must hold at least one day.').max(366, 'A calibration can hold at most a year (366 days).'),
    chainLimits: chainLimitsSchema,
  })
  .strict();
stationSettingsSchema satisfies z.ZodType<StationSettings>;

const outputCalibrationSchema = z
  .object({ dbuAtFullScale, referenceHz: hz, referenceDbfs: dbfs, meterEntry: z.string().max(64) })
  .strict();

const inputCalibrationSchema = z.discriminatedUnion('method', [
  z.object({ method: z.literal('loopback'), dbuAtFullScale, generatorDbfs: dbfs, capturedDbfs: dbfs, capturedHz: hz }).strict(),
  z.object({ method: z.literal('stated'), dbuAtFullScale, statedEntry: z.string().max(64) }).strict(),
]);

export const calibrationSchema = z.object({
  id: rowId,
  madeAt: isoTime,
  operator: z.string(),
  station: z.string(),
  setup: audioSetupSchema,
  output: outputCalibrationSchema,
  input: inputCalibrationSchema,
  secondInput: z
    .object({ channel: z.number().int().min(0).max(63), dbuAtFullScale, generatorDbfs: dbfs, capturedDbfs: dbfs, capturedHz: hz })
    .strict()
    .nullable()
    .optional(),
});
calibrationSchema satisfies z.ZodType<Calibration>;

/**
 * What the page sends to record a calibration: the raw observations (what was typed, what was
 * played and captured). Main computes the dBu figures from them itself, with the same functions
 * the page used to show them.
 */
export const calibrationRequestSchema = z
  .object({
    operator: z.string().trim().min(1, 'Enter the operator name.').pipe(plainText('operator name', 64)),
    setup: audioSetupSchema,
    output: z.object({ referenceHz: hz, referenceDbfs: dbfs, meterEntry: z.string().trim().min(1).max(64) }).strict(),
    input: z.discriminatedUnion('method', [
      z.object({ method: z.literal('loopback'), generatorDbfs: dbfs, capturedDbfs: dbfs, capturedHz: hz }).strict(),
      z.object({ method: z.literal('stated'), statedEntry: z.string().trim().min(1).max(64) }).strict(),
    ]),
    /** The loopback read on the input that carries a two-channel unit's channel 2 (the setup's second input). */
    secondInput: z.object({ channel: z.number().int().min(0).max(63), generatorDbfs: dbfs, capturedDbfs: dbfs, capturedHz: hz }).strict().nullable().default(null),
  })
  .strict();

const MAX_RESIDUALS = 32;
const MAX_RESPONSE_POINTS = 64;

const responseStepFields = { frequencyHz: hz, generatorDbfs: dbfs, capturedDbfs: dbfs };

export const chainCheckResultSchema = z
  .object({
    schemaVersion: z.literal(CHAIN_CHECK_SCHEMA_VERSION),
    measuredAt: isoTime,
    sampleRateHz: z.number().int().min(8000).max(768_000),
    inputDbuAtFullScale: dbuAtFullScale.nullable(),
    residuals: z
      .array(z.object({ frequencyHz: hz, generatorDbfs: dbfs, thdDb: db, thdnDb: db }).strict())
      .max(MAX_RESIDUALS),
    noiseFloor: z
      .object({
        bandLowHz: finite.nonnegative().max(400_000),
        bandHighHz: hz,
        unweightedDbfs: dbfs,
        aWeightedDbfs: dbfs,
        unweightedDbu: finite.min(-400).max(60).nullable(),
        aWeightedDbu: finite.min(-400).max(60).nullable(),
      })
      .strict()
      .nullable(),
    response: z
      .object({
        referenceHz: hz,
        referenceGainDb: db,
        points: z.array(z.object({ ...responseStepFields, gainDb: db, relativeDb: db }).strict()).max(MAX_RESPONSE_POINTS),
      })
      .strict()
      .nullable(),
    responseRefusal: z.string().max(400).nullable(),
    latency: z
      .object({
        latencySamples: z.number().int().nonnegative().max(10_000_000),
        latencyMs: finite.nonnegative().max(100_000),
        confidence: finite.nonnegative().max(1e6),
        inverted: z.boolean(),
      })
      .strict()
      .nullable(),
    latencyRefusal: z.string().max(400).nullable(),
  })
  .strict();
chainCheckResultSchema satisfies z.ZodType<ChainCheckResult>;

const chainCheckItemSchema = z.object({
  kind: z.enum(['residual-thd', 'residual-thdn', 'noise-unweighted', 'noise-a-weighted', 'noise-a-weighted-dbu', 'response-flatness', 'latency']),
  label: z.string(),
  value: finite.nullable(),
  limit: finite.nullable(),
  unit: z.string(),
  pass: z.boolean(),
  reason: z.string(),
});
export const chainCheckJudgementSchema = z.object({ pass: z.boolean(), items: z.array(chainCheckItemSchema) });
chainCheckJudgementSchema satisfies z.ZodType<ChainCheckJudgement>;

export const chainCheckRecordSchema = z.object({
  id: rowId,
  calibrationId: rowId,
  operator: z.string(),
  result: chainCheckResultSchema,
  judgement: chainCheckJudgementSchema,
});
chainCheckRecordSchema satisfies z.ZodType<ChainCheckRecord>;

export const calibrationUsedSchema = z.object({
  id: rowId,
  madeAt: z.string(),
  operator: z.string(),
  expiresAt: z.string(),
  inputDbuAtFullScale: finite,
  outputDbuAtFullScale: finite,
  secondInput: z.object({ channel: z.number().int().min(0).max(63), dbuAtFullScale: finite }).strict().nullable().optional(),
  chainFloor: z
    .object({
      residualThdDb: finite.nullable(),
      residualAtHz: finite.nullable(),
      noiseAWeightedDbu: finite.nullable(),
      checkedAt: z.string(),
      pass: z.boolean(),
    })
    .nullable(),
});
calibrationUsedSchema satisfies z.ZodType<CalibrationUsed>;

/** The station's settings, its latest calibration and that calibration's latest chain check. */
export const stationCalibrationSchema = z.object({
  settings: stationSettingsSchema,
  calibration: calibrationSchema.nullable(),
  chainCheck: chainCheckRecordSchema.nullable(),
});
