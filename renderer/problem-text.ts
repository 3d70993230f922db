// What the technician reads when something fails in the page. Main's messages (ApiError) and the
// audio path's own (AudioProblem) are already written for the technician and shown as they are.
// Anything else is unexpected (a browser DOMException, a bug): its raw text (a stack, a parser's
// position) means nothing at the bench, so it goes to the console and the technician reads what
// failed and what to do. The error's name stays: "NotReadableError" is worth reporting.

import { ApiError } from './api.ts';

const FOR_THE_TECHNICIAN = new Set(['ApiError', 'AudioProblem']);

export function problemText(error: unknown, whatFailed: string, whatToDo: string): string {
  if (error instanceof ApiError || (error instanceof Error && FOR_THE_TECHNICIAN.has(error.name))) return error.message;
  console.error(`[trimbench] ${whatFailed}`, error);
  const name = (error as { name?: unknown } | null)?.name;
  const kind = typeof name === 'string' && /^[A-Za-z]{1,40}$/.test(name) && name !== 'Error' ? ` (${name})` : '';
  return `${whatFailed}: an unexpected problem${kind}. ${whatToDo}`;
}
