// THD+N against the unit's output level as a max-level step rises, with the step's threshold: the
// technician sees the knee coming and where the crossing lies.

import { useMemo } from 'react';
import type uPlot from 'uplot';
import { UPlotChart } from './UPlotChart.tsx';

export function MaxLevelPlot({
  points,
  thresholdPercent,
  rangeDbu,
}: {
  points: readonly { outputDbu: number; thdnPercent: number }[];
  thresholdPercent: number;
  /** The levels the step plays, first and last: the axis spans them from the start, with the threshold across. */
  rangeDbu: readonly [number, number];
}) {
  // uPlot wants x ascending; a stage against its rails can give the same output twice. The range's
  // ends carry the threshold line only, so it is drawn across from the first reading on.
  const data = useMemo<uPlot.AlignedData>(() => {
    const rows = [...points.map((p) => ({ x: p.outputDbu, y: p.thdnPercent as number | null })), { x: rangeDbu[0], y: null }, { x: rangeDbu[1], y: null }].sort((a, b) => a.x - b.x);
    return [rows.map((r) => r.x), rows.map((r) => r.y), rows.map(() => thresholdPercent)];
  }, [points, thresholdPercent, rangeDbu]);
  const options = useMemo<Omit<uPlot.Options, 'width' | 'height'> & { height: number }>(
    () => ({
      height: 200,
      legend: { show: false },
      cursor: { drag: { x: false, y: false } },
      scales: {
        x: { time: false, range: (_u, min, max) => [Math.floor(min) - 1, Math.ceil(max) + 1] },
        // Log THD+N: from well under the threshold to well over it, whatever the unit does.
        y: { distr: 3, range: (_u, min, max) => [Math.min(min, thresholdPercent / 100), Math.max(max, thresholdPercent * 10)] },
      },
      axes: [{ label: 'Output, dBu' }, { label: 'THD+N, %', size: 60 }],
      series: [
        {},
        { label: 'THD+N', stroke: '#1f5fa8', width: 2, spanGaps: true, points: { show: true, size: 6 } },
        { label: `${thresholdPercent} %`, stroke: '#b04a2f', width: 1, dash: [6, 4], points: { show: false } },
      ],
    }),
    // The chart keeps its options for life; the panel remounts it with the step.
    // eslint-disable-next-line react-hooks/exhaustive-deps
    [],
  );
  if (points.length === 0) return null;
  return <UPlotChart options={options} data={data} label={`THD+N in percent against the unit's output level in dBu, with the ${thresholdPercent} % threshold`} />;
}
