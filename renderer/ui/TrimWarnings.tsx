import type { TrimWarning } from '../../shared/trim/trim-assistant.ts';
import { WARNING_TITLES } from '../../shared/trim/warning-titles.ts';

/** The warnings that hold at the typed position, or (once there are points) a quiet line in their place. */
export function TrimWarnings({ warnings, anyPoints, at }: { warnings: readonly TrimWarning[]; anyPoints: boolean; at: string }) {
  if (warnings.length > 0) {
    return (
      <div className="warning-banner" role="alert" data-testid="trim-warnings">
        {warnings.map((w) => (
          <p key={w.id} data-warning={w.id}>
            <strong>{WARNING_TITLES[w.id]}.</strong> {w.seen} <em>{w.advice}</em>
          </p>
        ))}
      </div>
    );
  }
  // Holds the banner's place, so a warning appearing does not push the panel down.
  if (!anyPoints) return null;
  return (
    <p className="warning-banner quiet" data-testid="no-warnings">
      No warning at {at}.
    </p>
  );
}
