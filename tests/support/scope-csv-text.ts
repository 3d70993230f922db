// Scope exports written as text for the reader's and the command's tests: the writer the demo bench
// uses (shared/scope/scope-csv-text.ts), which writes every layout the reader takes.

export { scopeCsvText, type ScopeCsvLayout } from '../../shared/scope/scope-csv-text.ts';
