// The whole unit's verdict over a procedure's steps. Computed from the step results alone, so main
// (from the stored measurements), the page (to say what is still missing) and the headless demo
// line reach the same verdict with the same reasons.

import type { ProcedureFile, ProcedureStep } from './procedure-file.ts';
import type { Verdict } from './check-steps.ts';
import { asSentences } from '../format.ts';

/** One step's result as recorded: a check's verdict, the trim's judgement, an acknowledged notice (pass). */
export interface StepOutcome {
  stepId: string;
  verdict: Verdict;
  /** Why it failed, plain sentences; empty on a pass. */
  reasons: readonly string[];
}

export type StepStatus = 'pass' | 'fail' | 'not-run';

export interface UnitJudgement {
  verdict: Verdict;
  /** Every step has a result, or a failed step that says "stop" ended the run. */
  finished: boolean;
  /** The step whose failure ended the run, or null. */
  stoppedAt: string | null;
  /** The first step still without a result while the run goes on; null when finished. */
  nextStepId: string | null;
  steps: { stepId: string; title: string; kind: ProcedureStep['kind']; status: StepStatus }[];
  /** Why the unit does not pass, in step order; empty on a pass. */
  reasons: string[];
}

type Judged = Pick<ProcedureFile, 'steps'> & Partial<Pick<ProcedureFile, 'code' | 'revision'>>;

const named = (step: ProcedureStep) => `Step “${step.id}” (${step.title})`;
const joined = (reasons: readonly string[]) => (reasons.length > 0 ? `: ${asSentences(reasons)}` : '.');

/**
 * PASS only when every step has a result and every result passed. A step without a result is not a
 * pass. A failed step whose onFail is "stop" (and a notice, which nothing may pass unread) ends the
 * run as FAIL there; steps after it are not run. When a step was repeated, its latest result counts.
 */
export function judgeUnit(procedure: Judged, results: readonly StepOutcome[]): UnitJudgement {
  const latest = new Map<string, StepOutcome>();
  for (const r of results) latest.set(r.stepId, r);
  const reasons: string[] = [];
  const known = new Set(procedure.steps.map((s) => s.id));
  for (const id of latest.keys()) {
    if (!known.has(id)) {
      const which = procedure.code ? ` ${procedure.code} revision ${procedure.revision}` : '';
      reasons.push(`A result names step “${id}”, which is not in procedure${which}: the run and its procedure do not match.`);
    }
  }

  const steps: UnitJudgement['steps'] = [];
  let stoppedAt: string | null = null;
  let nextStepId: string | null = null;
  for (const step of procedure.steps) {
    const outcome = stoppedAt === null ? latest.get(step.id) : undefined;
    const status: StepStatus = outcome ? outcome.verdict : 'not-run';
    steps.push({ stepId: step.id, title: step.title, kind: step.kind, status });
    if (stoppedAt !== null) continue;
    if (!outcome) {
      nextStepId ??= step.id;
      reasons.push(`${named(step)} was not run.`);
      continue;
    }
    if (outcome.verdict === 'pass') continue;
    const stops = step.kind === 'notice' || step.onFail === 'stop';
    if (stops) {
      stoppedAt = step.id;
      reasons.push(`${named(step)} failed, and a failure there stops the run${joined(outcome.reasons)}`);
    } else {
      reasons.push(`${named(step)} failed${joined(outcome.reasons)}`);
    }
  }
  // Steps after a stop are not run by design: the stop is the reason, not each of them (the loop
  // above adds no reason past it).
  const finished = stoppedAt !== null || nextStepId === null;
  return {
    verdict: reasons.length === 0 && finished ? 'pass' : 'fail',
    finished,
    stoppedAt,
    nextStepId: stoppedAt !== null ? null : nextStepId,
    steps,
    reasons,
  };
}


/**
 * The first result of a step after `stepId`, or null. The trim may not change once one exists: the
 * steps after it were measured at the setting it was left at.
 */
export function laterStepResult<R extends StepOutcome>(procedure: Pick<ProcedureFile, 'steps'>, results: readonly R[], stepId: string): R | null {
  const index = procedure.steps.findIndex((s) => s.id === stepId);
  const later = new Set(procedure.steps.slice(index + 1).map((s) => s.id));
  return results.find((r) => later.has(r.stepId)) ?? null;
}

/**
 * Whether a step already recorded may be measured again before the run is finished: never after a
 * failure at a "stop" step (the run ends there), and the trim not once a later step was measured.
 * Main refuses the same cases; the page offers only what main will take.
 */
export function mayRepeat(procedure: Pick<ProcedureFile, 'steps'>, results: readonly StepOutcome[], stepId: string): boolean {
  if (!results.some((r) => r.stepId === stepId)) return false;
  if (judgeUnit(procedure, results).stoppedAt !== null) return false;
  const step = procedure.steps.find((s) => s.id === stepId);
  return step?.kind !== 'trim' || laterStepResult(procedure, results, stepId) === null;
}
