// A response step's result drawn again from the record: the response relative to its reference
// frequency with the step's mask, and H2–H5 against the fundamental's frequency.

import { useMemo } from 'react';
import type uPlot from 'uplot';
import type { ResponseCurve, ResponseStep } from '../../shared/procedures/response.ts';
import { maskBoundsAt } from '../../shared/procedures/response.ts';
import { UPlotChart } from './UPlotChart.tsx';

type ChartOptions = Omit<uPlot.Options, 'width' | 'height'> & { height: number };

const HARMONIC_COLOURS: Record<number, string> = { 2: '#1f5fa8', 3: '#b04a2f', 4: '#4f8a3c', 5: '#7a4fa0' };
const logX = { time: false, distr: 3, range: (_u: uPlot, min: number, max: number) => [min, max] as uPlot.Range.MinMax } as const;

export function ResponsePlot({ curve, mask }: { curve: ResponseCurve; mask: ResponseStep['mask'] }) {
  const hz = useMemo(() => curve.response.map(([f]) => f), [curve]);
  // The mask's bounds at the response's own frequencies, and at its points (null outside its span).
  const responseData = useMemo<uPlot.AlignedData>(() => {
    const xs = [...new Set([...hz, ...mask.map((p) => p.frequencyHz)])].sort((a, b) => a - b);
    const level = new Map(curve.response.map(([f, db]) => [f, db]));
    const phase = new Map(curve.response.map(([f, , deg]) => [f, deg]));
    return [
      xs,
      xs.map((f) => level.get(f) ?? null),
      xs.map((f) => phase.get(f) ?? null),
      xs.map((f) => maskBoundsAt(mask, f)?.high ?? null),
      xs.map((f) => maskBoundsAt(mask, f)?.low ?? null),
    ];
  }, [curve, mask, hz]);
  const levels = [...curve.response.map(([, db]) => db), ...mask.flatMap((p) => [p.lowDb ?? 0, p.highDb ?? 0])];
  const top = Math.ceil(Math.max(1, ...levels) + 0.5);
  const bottom = Math.floor(Math.min(-1, ...levels) - 0.5);
  const responseOptions = useMemo<ChartOptions>(
    () => ({
      height: 200,
      legend: { show: true, live: false },
      cursor: { drag: { x: false, y: false } },
      scales: { x: logX, y: { range: [bottom, top] }, deg: { range: [-180, 180] } },
      axes: [{ label: 'Hz' }, { label: `dB re ${curve.referenceHz} Hz`, size: 60 }, { scale: 'deg', side: 1, label: 'Phase, °', size: 50, grid: { show: false } }],
      series: [
        {},
        { label: 'Response', stroke: '#1f5fa8', width: 2, spanGaps: true },
        { label: 'Phase', scale: 'deg', stroke: '#8a8a8a', width: 1, spanGaps: true, points: { show: false } },
        { label: 'Mask high', stroke: '#b04a2f', width: 1, dash: [6, 4], points: { show: false } },
        { label: 'Mask low', stroke: '#b04a2f', width: 1, dash: [6, 4], points: { show: false } },
      ],
    }),
    // Fixed for the chart's life; a new result remounts it (by key).
    // eslint-disable-next-line react-hooks/exhaustive-deps
    [],
  );

  const harmonicData = useMemo<uPlot.AlignedData>(
    () => [hz, ...curve.harmonics.map((h) => {
      const at = new Map(h.points.map(([f, dbc]) => [f, dbc]));
      return hz.map((f) => at.get(f) ?? null);
    })],
    [curve, hz],
  );
  const worstDbc = Math.max(-80, ...curve.harmonics.flatMap((h) => h.points.map(([, dbc]) => dbc)));
  const harmonicOptions = useMemo<ChartOptions>(
    () => ({
      height: 170,
      legend: { show: true, live: false },
      cursor: { drag: { x: false, y: false } },
      scales: { x: { ...logX, range: () => [hz[0], hz[hz.length - 1]] as uPlot.Range.MinMax }, y: { range: [Math.min(-120, Math.floor(worstDbc / 10) * 10 - 40), Math.ceil(worstDbc / 10) * 10 + 10] } },
      axes: [{ label: 'Fundamental, Hz' }, { label: 'dBc', size: 60 }],
      series: [{}, ...curve.harmonics.map((h) => ({ label: `H${h.order}`, stroke: HARMONIC_COLOURS[h.order] ?? '#555', width: 1.5 }))],
    }),
    // eslint-disable-next-line react-hooks/exhaustive-deps
    [],
  );

  return (
    <div className="response-plots" data-testid="response-plot">
      <UPlotChart options={responseOptions} data={responseData} label={`Frequency response relative to ${curve.referenceHz} Hz with the step's mask, and its phase with the latency removed`} />
      {curve.harmonics.length > 0 ? (
        <UPlotChart options={harmonicOptions} data={harmonicData} label="Harmonic distortion H2 to H5 relative to the fundamental, by the fundamental's frequency" />
      ) : (
        <p className="hint">No harmonic could be resolved from this sweep.</p>
      )}
      <p className="hint" data-testid="response-correction">
        {curve.corrected ? "Corrected by the station's chain response." : `Not corrected for the station's own response: ${curve.uncorrectedReason ?? 'no chain response'}.`} Latency{' '}
        {((1000 * curve.latencySamples) / curve.sampleRateHz).toFixed(1)} ms.
      </p>
    </div>
  );
}
