import type { CalibrationStatus } from '../../shared/calibration/station-calibration.ts';

const TEXT: Record<CalibrationStatus['state'], (status: CalibrationStatus) => string> = {
  none: () => 'Not calibrated',
  valid: (status) => `Calibrated · valid until ${status.expiresAt?.slice(0, 10) ?? '—'}`,
  expired: () => 'Calibration expired',
  'setup-changed': () => 'Calibration: setup changed',
};

/** The station's calibration in the top bar; it opens the Station view, where it is made. */
export function CalibrationBadge({ status, onOpen }: { status: CalibrationStatus | null; onOpen(): void }) {
  if (!status) return null;
  return (
    <button
      type="button"
      className={`calibration-badge ${status.state}`}
      data-testid="calibration-badge"
      data-state={status.state}
      title={status.message}
      aria-label={`${TEXT[status.state](status)}. ${status.message} Opens the Station view.`}
      onClick={onOpen}
    >
      {TEXT[status.state](status)}
    </button>
  );
}
