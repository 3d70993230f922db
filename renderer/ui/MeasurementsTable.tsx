import type { Measurement } from '../../shared/procedures/check-steps.ts';
import { isUnsignedUnit, limitText, quantityDecimals, quantityLabel, valueText } from '../../shared/procedures/step-text.ts';
import { fixed } from './format.ts';

/** Each measured quantity against its limits, with its verdict: live while measuring, or as stored. */
export function MeasurementsTable({ measurements, live }: { measurements: readonly Measurement[]; live: boolean }) {
  return (
    <table className="measurements" data-testid={live ? 'live-measurements' : 'stored-measurements'}>
      <thead>
        <tr>
          <th scope="col">Quantity</th>
          <th scope="col">Value</th>
          <th scope="col">Limits</th>
          <th scope="col">{live ? 'Now' : 'Verdict'}</th>
        </tr>
      </thead>
      <tbody>
        {measurements.map((m) => (
          <tr key={m.quantity} data-quantity={m.quantity} data-value={m.value ?? ''} title={m.note ?? undefined}>
            <td>{quantityLabel(m.quantity)}</td>
            <td className="value">{m.value === null ? 'not measured' : isUnsignedUnit(m.unit) ? valueText(m.value, m.unit, quantityDecimals(m.quantity)) : `${fixed(m.value, m.unit === 'dB' && Math.abs(m.value) < 10 ? 2 : 1)} ${m.unit}`}</td>
            <td>{limitText(m, quantityDecimals(m.quantity))}</td>
            <td className={m.verdict === 'pass' ? 'verdict-cell pass' : 'verdict-cell fail'}>{m.verdict === 'pass' ? 'within' : 'outside'}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}
