import { useMemo } from 'react';
import type uPlot from 'uplot';
import type { TrimPoint } from '../../shared/ipc/contract.ts';
import { UPlotChart } from './UPlotChart.tsx';

const OPTIONS: Omit<uPlot.Options, 'width' | 'height'> & { height: number } = {
  height: 220,
  legend: { show: false },
  scales: {
    x: { time: false },
    // At least a 10 dB span, so readings that agree within a few tenths do not look like a curve.
    y: {
      range: (_chart, min, max) => {
        const middle = (min + max) / 2;
        const half = Math.max(5, (max - min) / 2 + 2);
        return [middle - half, middle + half];
      },
    },
  },
  axes: [{ label: 'Trimmer position' }, { label: 'THD, dB', size: 60 }],
  series: [{}, { stroke: '#b0461f', width: 1.5, points: { show: true, size: 8, fill: '#b0461f' } }],
};

export function TrimPlot({ points }: { points: TrimPoint[] }) {
  // uPlot wants x ascending; the trim goes that way, but a technician may step back.
  const data = useMemo<uPlot.AlignedData>(() => {
    const sorted = [...points].sort((a, b) => a.position - b.position || a.sequence - b.sequence);
    return [sorted.map((p) => p.position), sorted.map((p) => p.reading.thdDb)];
  }, [points]);
  return <UPlotChart options={OPTIONS} data={data} label="THD in dB against trimmer position for the recorded trim points" />;
}
