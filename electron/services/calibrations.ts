// The station's level calibrations and chain checks in the records database. Main computes every
// figure it stores from the raw observations the page sends (what was typed, played and captured),
// with the same shared functions the page used to show them, and judges the chain check itself.

import { z } from 'zod';
import { chainNoiseFloor, judgeChainCheck, type ChainCheckResult } from '../../shared/calibration/chain-check.ts';
import { checkChainFloorDbu } from '../../shared/calibration/chain-floor.ts';
import { chainResponse, type ChainResponse } from '../../shared/calibration/chain-response.ts';
import {
  calibrationExpiresAt,
  calibrationStatus,
  residualNear,
  type AudioSetup,
  type Calibration,
  type CalibrationStatus,
  type CalibrationUsed,
  type ChainCheckRecord,
} from '../../shared/calibration/station-calibration.ts';
import type { StationSettings } from '../../shared/calibration/station-settings.ts';
import {
  inputCalibrationFromLoopback,
  inputCalibrationFromSpec,
  outputCalibrationFromReading,
  REFERENCE_DBFS_RANGE,
} from '../../shared/calibration/voltmeter-entry.ts';
import { audioSetupSchema, chainCheckJudgementSchema, chainCheckResultSchema } from '../../shared/ipc/calibration-schemas.ts';
import type { Db } from './database.ts';
import { ExpectedFailure } from './expected-failure.ts';
import { checkSealed, fromStoredJson, prepareSealedInserts, toStoredJson } from './stored-record.ts';

/** The loopback's captured tone must be the reference tone: within 1 % of its frequency (as the trim's stimulus check). */
const LOOPBACK_FREQUENCY_TOLERANCE = 0.01;

interface CalibrationRow {
  id: number;
  crc: number | null;
  made_at: string;
  operator: string;
  station: string;
  setup_json: string;
  output_dbu_at_fs: number;
  input_dbu_at_fs: number;
  detail_json: string;
}

interface ChainCheckRow {
  id: number;
  crc: number | null;
  calibration_id: number;
  measured_at: string;
  operator: string;
  result_json: string;
  judgement_json: string;
  pass: number;
}

const detailSchema = z.object({
  output: z.object({ referenceHz: z.number(), referenceDbfs: z.number(), meterEntry: z.string() }),
  input: z.discriminatedUnion('method', [
    z.object({ method: z.literal('loopback'), generatorDbfs: z.number(), capturedDbfs: z.number(), capturedHz: z.number() }),
    z.object({ method: z.literal('stated'), statedEntry: z.string() }),
  ]),
  // Absent in calibrations stored before a second input could be calibrated.
  secondInput: z.object({ channel: z.number(), dbuAtFullScale: z.number(), generatorDbfs: z.number(), capturedDbfs: z.number(), capturedHz: z.number() }).nullable().optional(),
});

export interface CalibrationRequest {
  operator: string;
  setup: AudioSetup;
  output: { referenceHz: number; referenceDbfs: number; meterEntry: string };
  input: { method: 'loopback'; generatorDbfs: number; capturedDbfs: number; capturedHz: number } | { method: 'stated'; statedEntry: string };
  /** The same loopback read on the setup's second input; null when the setup reads one channel. */
  secondInput?: (LoopbackObservation & { channel: number }) | null;
}

interface LoopbackObservation {
  generatorDbfs: number;
  capturedDbfs: number;
  capturedHz: number;
}

export type Calibrations = ReturnType<typeof createCalibrations>;

export function createCalibrations(
  db: Db,
  { stationName, now = () => new Date(), refuseUnlessWritable }: { stationName: () => string; now?: () => Date; refuseUnlessWritable: () => void },
) {
  const insertSealed = prepareSealedInserts(db);
  const statements = {
    latest: db.prepare<[], CalibrationRow>('SELECT * FROM calibrations ORDER BY id DESC LIMIT 1'),
    byId: db.prepare<[number], CalibrationRow>('SELECT * FROM calibrations WHERE id = ?'),
    all: db.prepare<[], CalibrationRow>('SELECT * FROM calibrations ORDER BY id DESC'),
    chainChecksOf: db.prepare<[number], ChainCheckRow>('SELECT * FROM chain_checks WHERE calibration_id = ? ORDER BY id DESC'),
    chainCheckById: db.prepare<[number], ChainCheckRow>('SELECT * FROM chain_checks WHERE id = ?'),
  };

  function toCalibration(row: CalibrationRow): Calibration {
    const what = `calibration ${row.id}`;
    checkSealed('calibrations', row, what);
    const detail = fromStoredJson(row.detail_json, detailSchema, what);
    return {
      id: row.id,
      madeAt: row.made_at,
      operator: row.operator,
      station: row.station,
      setup: fromStoredJson(row.setup_json, audioSetupSchema, what),
      output: { dbuAtFullScale: row.output_dbu_at_fs, ...detail.output },
      input: { dbuAtFullScale: row.input_dbu_at_fs, ...detail.input },
      secondInput: detail.secondInput ?? null,
    };
  }

  function toChainCheck(row: ChainCheckRow): ChainCheckRecord {
    const what = `chain check ${row.id}`;
    checkSealed('chain_checks', row, what);
    return {
      id: row.id,
      calibrationId: row.calibration_id,
      operator: row.operator,
      result: fromStoredJson(row.result_json, chainCheckResultSchema, what),
      judgement: fromStoredJson(row.judgement_json, chainCheckJudgementSchema, what),
    };
  }

  function latest(): Calibration | null {
    const row = statements.latest.get();
    return row ? toCalibration(row) : null;
  }

  function latestChainCheck(calibrationId: number): ChainCheckRecord | null {
    const row = statements.chainChecksOf.get(calibrationId);
    return row ? toChainCheck(row) : null;
  }

  function refuse(message: string): never {
    throw new ExpectedFailure(`The calibration was not stored: ${message}`);
  }

  return {
    latest,
    latestChainCheck,

    /** The latest calibration, its chain check and whether it holds for `setup` now. */
    current(settings: StationSettings, setup: AudioSetup | null): { calibration: Calibration | null; chainCheck: ChainCheckRecord | null; status: CalibrationStatus } {
      const calibration = latest();
      return {
        calibration,
        chainCheck: calibration ? latestChainCheck(calibration.id) : null,
        status: calibrationStatus(calibration, setup, now(), settings.calibrationExpiryDays),
      };
    },

    /** Computes both channels' dBu at 0 dBFS from what was typed and measured, checks them and stores the calibration. */
    record(request: CalibrationRequest): Calibration {
      refuseUnlessWritable();
      const { output, input } = request;
      if (output.referenceDbfs < REFERENCE_DBFS_RANGE.min || output.referenceDbfs > REFERENCE_DBFS_RANGE.max) {
        refuse(`the reference tone must be between ${REFERENCE_DBFS_RANGE.min} and ${REFERENCE_DBFS_RANGE.max} dBFS.`);
      }
      const out = outputCalibrationFromReading(output.referenceDbfs, output.meterEntry);
      if (!out.ok) refuse(out.message);
      const outputDbu = out.dbuAtFullScale;

      function loopbackInput(observed: LoopbackObservation, which: string): number {
        if (observed.generatorDbfs < REFERENCE_DBFS_RANGE.min || observed.generatorDbfs > REFERENCE_DBFS_RANGE.max) {
          refuse(`the loopback tone must be between ${REFERENCE_DBFS_RANGE.min} and ${REFERENCE_DBFS_RANGE.max} dBFS.`);
        }
        if (Math.abs(observed.capturedHz / output.referenceHz - 1) > LOOPBACK_FREQUENCY_TOLERANCE) {
          refuse(`${which} heard ${observed.capturedHz.toFixed(1)} Hz, not the ${output.referenceHz} Hz reference: check that the output is looped to it.`);
        }
        const result = inputCalibrationFromLoopback({ outputDbuAtFullScale: outputDbu, generatorDbfs: observed.generatorDbfs, capturedDbfs: observed.capturedDbfs });
        if (!result.ok) refuse(result.message);
        return result.dbuAtFullScale;
      }
      function statedInput(entry: string): number {
        const result = inputCalibrationFromSpec(entry);
        if (!result.ok) refuse(result.message);
        return result.dbuAtFullScale;
      }
      const inputDbu = input.method === 'loopback' ? loopbackInput(input, 'the input') : statedInput(input.statedEntry);
      const second = request.secondInput ?? null;
      const secondChannel = request.setup.secondInputChannel ?? null;
      if (second !== null && secondChannel === null) refuse('a second input was measured, but the setup names no input for the unit\'s channel 2.');
      if (second === null && secondChannel !== null) {
        refuse(`the setup reads the unit's channel 2 on input ${secondChannel + 1}, and that input was not measured: loop the output to it and read the reference there too.`);
      }
      if (second !== null && second.channel !== secondChannel) {
        refuse(`the second input was read on input ${second.channel + 1}, but the setup reads the unit's channel 2 on input ${(secondChannel ?? 0) + 1}: read it again on that input.`);
      }
      // Both inputs' figures must come from the same reference (the calibrated output) for their
      // difference to be the interface's, not a data sheet's error against a measurement.
      if (second !== null && input.method !== 'loopback') refuse('the second input is found by loopback, so the first must be too: choose the loopback for the input level.');
      const secondInput =
        second !== null && secondChannel !== null
          ? { channel: secondChannel, dbuAtFullScale: loopbackInput(second, `input ${secondChannel + 1}`), generatorDbfs: second.generatorDbfs, capturedDbfs: second.capturedDbfs, capturedHz: second.capturedHz }
          : null;
      const id = insertSealed('calibrations', {
        made_at: now().toISOString(),
        operator: request.operator,
        station: stationName(),
        setup_json: toStoredJson(request.setup),
        output_dbu_at_fs: out.dbuAtFullScale,
        input_dbu_at_fs: inputDbu,
        detail_json: toStoredJson(secondInput ? { output, input, secondInput } : { output, input }),
      });
      return toCalibration(statements.byId.get(id)!);
    },

    /**
     * Stores a chain check of the latest calibration. The figures main can derive it derives again:
     * the noise floor in dBu from the stored input calibration, the response from its raw steps, and
     * the judgement against the station's limits.
     */
    recordChainCheck(request: { calibrationId: number; operator: string; result: ChainCheckResult }, settings: StationSettings): ChainCheckRecord {
      refuseUnlessWritable();
      const calibration = latest();
      if (!calibration || calibration.id !== request.calibrationId) {
        throw new ExpectedFailure('The chain check was not stored: it belongs to a calibration that is no longer the station\'s latest. Run it again.');
      }
      const { result } = request;
      if (result.sampleRateHz !== calibration.setup.sampleRateHz) {
        throw new ExpectedFailure(
          `The chain check was not stored: it ran at ${result.sampleRateHz} Hz, the calibration at ${calibration.setup.sampleRateHz} Hz. Calibrate at this rate first.`,
        );
      }
      const inputCalibration = { dbuAtFullScale: calibration.input.dbuAtFullScale };
      let response = result.response;
      let responseRefusal = result.responseRefusal;
      if (response) {
        const derived = chainResponse(response.points.map(({ frequencyHz, generatorDbfs, capturedDbfs }) => ({ frequencyHz, generatorDbfs, capturedDbfs })));
        response = derived.ok ? derived.response : null;
        responseRefusal = derived.ok ? null : derived.reason;
      }
      const checked: ChainCheckResult = {
        ...result,
        inputDbuAtFullScale: inputCalibration.dbuAtFullScale,
        noiseFloor: result.noiseFloor ? chainNoiseFloor(result.noiseFloor, inputCalibration) : null,
        response,
        responseRefusal,
      };
      // A floor below the thermal noise of a 150 Ω source cannot be real: the input calibration is wrong.
      const floorDbu = checked.noiseFloor?.unweightedDbu ?? null;
      if (floorDbu !== null && checked.noiseFloor) {
        const thermal = checkChainFloorDbu(floorDbu, { bandwidthHz: checked.noiseFloor.bandHighHz - checked.noiseFloor.bandLowHz });
        if (!thermal.ok) throw new ExpectedFailure(`The chain check was not stored: ${thermal.message}`);
      }
      const judgement = judgeChainCheck(checked, settings.chainLimits);
      const id = insertSealed('chain_checks', {
        calibration_id: calibration.id,
        measured_at: checked.measuredAt,
        operator: request.operator,
        result_json: toStoredJson(chainCheckResultSchema.parse(checked)),
        judgement_json: toStoredJson(judgement),
        pass: judgement.pass ? 1 : 0,
      });
      return toChainCheck(statements.chainCheckById.get(id)!);
    },

    list(): { calibration: Calibration; chainChecks: ChainCheckRecord[] }[] {
      return statements.all.all().map((row) => ({
        calibration: toCalibration(row),
        chainChecks: statements.chainChecksOf.all(row.id).map(toChainCheck),
      }));
    },

    /** What a run names of the calibration it used, with the chain's floor near the run's test frequency. */
    used(ids: { calibrationId: number; chainCheckId: number | null; expiresAt: string }, testHz: number): CalibrationUsed {
      const row = statements.byId.get(ids.calibrationId);
      if (!row) throw new ExpectedFailure(`Calibration ${ids.calibrationId} named by the run is not in the records.`);
      const calibration = toCalibration(row);
      const checkRow = ids.chainCheckId === null ? undefined : statements.chainCheckById.get(ids.chainCheckId);
      const check = checkRow ? toChainCheck(checkRow) : null;
      const near = check ? residualNear(check.result, testHz) : null;
      return {
        id: calibration.id,
        madeAt: calibration.madeAt,
        operator: calibration.operator,
        expiresAt: ids.expiresAt,
        inputDbuAtFullScale: calibration.input.dbuAtFullScale,
        outputDbuAtFullScale: calibration.output.dbuAtFullScale,
        secondInput: calibration.secondInput ? { channel: calibration.secondInput.channel, dbuAtFullScale: calibration.secondInput.dbuAtFullScale } : null,
        chainFloor: check
          ? {
              residualThdDb: near?.thdDb ?? null,
              residualAtHz: near?.frequencyHz ?? null,
              noiseAWeightedDbu: check.result.noiseFloor?.aWeightedDbu ?? null,
              checkedAt: check.result.measuredAt,
              pass: check.judgement.pass,
            }
          : null,
      };
    },

    /**
     * The chain's frequency response from a run's chain check (output looped to input, stepped sine),
     * derived again from its raw steps as when it was stored; null without a check or a response.
     */
    chainResponseOf(chainCheckId: number | null): { response: ChainResponse; checkedAt: string } | null {
      const checkRow = chainCheckId === null ? undefined : statements.chainCheckById.get(chainCheckId);
      if (!checkRow) return null;
      const check = toChainCheck(checkRow);
      if (!check.result.response) return null;
      const derived = chainResponse(check.result.response.points.map(({ frequencyHz, generatorDbfs, capturedDbfs }) => ({ frequencyHz, generatorDbfs, capturedDbfs })));
      return derived.ok ? { response: derived.response, checkedAt: check.result.measuredAt } : null;
    },

    /** The audio setup a calibration was made with (a run measured under it must still use it). */
    setupOf(calibrationId: number): AudioSetup {
      const row = statements.byId.get(calibrationId);
      if (!row) throw new ExpectedFailure(`Calibration ${calibrationId} named by the run is not in the records.`);
      return toCalibration(row).setup;
    },

    expiresAt: (calibration: Calibration, settings: StationSettings) => calibrationExpiresAt(calibration.madeAt, settings.calibrationExpiryDays),
  };
}
