// A schema-2 procedure as the trim runtime reads it today: its model, serial rule and trim step in
// the schema-1 shape, with the notices' instructions first (safety first). The file itself is kept
// whole beside it; this view lets every run of a procedure with a trim step work as it does now
// while the check steps are wired in.

import type { Procedure } from './procedure.ts';
import type { ProcedureFile } from './procedure-file.ts';

/** The trim view of a procedure file, or null when it has no trim step. */
export function trimView(file: ProcedureFile): Procedure | null {
  const trim = file.steps.find((step) => step.kind === 'trim');
  if (!trim) return null;
  const notices = file.steps.filter((step) => step.kind === 'notice').flatMap((step) => step.instructions);
  const { id: _id, title: _title, kind: _kind, onFail: _onFail, instructions, ...parameters } = trim;
  return {
    schemaVersion: 1,
    code: file.code,
    revision: file.revision,
    title: file.title,
    invented: file.invented,
    model: { code: file.model.code, name: file.model.name, maker: file.model.maker },
    requiresCalibration: file.requiresCalibration,
    serial: { ...file.serial },
    trim: { ...parameters, instructions: [...notices, ...instructions] },
  };
}
