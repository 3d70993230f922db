// An expected failure: bad input from a person, a file or a device. Its message is for the
// technician (what was wrong, what to do) and crosses IPC as is. Anything else thrown is a bug.
export class ExpectedFailure extends Error {
  override name = 'ExpectedFailure';
}

/** A run that cannot pass, refused with its reasons: the page offers to finish it as FAIL with them. */
export class CannotPass extends ExpectedFailure {
  override name = 'CannotPass';
}

/** A unit tested before: a new run is a retest and needs its reason (the page asks for it). */
export class RetestNeedsReason extends ExpectedFailure {
  override name = 'RetestNeedsReason';
}
