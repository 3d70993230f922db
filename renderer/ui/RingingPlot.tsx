// One edge of the scope record as main stored it, with the envelope fitted to its ringing drawn
// above and below the final level (shared/procedures/ringing.ts computes both).

import { useMemo } from 'react';
import type uPlot from 'uplot';
import { envelopeAt, type EdgePlot } from '../../shared/procedures/ringing.ts';
import { UPlotChart } from './UPlotChart.tsx';

export function RingingPlot({ plot, fileName }: { plot: EdgePlot; fileName: string }) {
  // Microseconds on the axis: a 20 kHz square's half period is 25 µs.
  const data = useMemo<uPlot.AlignedData>(() => {
    const from = plot.envelopeFromS ?? 0;
    const envelope = plot.timeS.map((t) => (t >= from ? envelopeAt(plot, t) : null));
    return [plot.timeS.map((t) => t * 1e6), plot.values, envelope.map((e) => e?.upper ?? null), envelope.map((e) => e?.lower ?? null)];
  }, [plot]);
  const options = useMemo<Omit<uPlot.Options, 'width' | 'height'> & { height: number }>(
    () => ({
      height: 240,
      legend: { show: false },
      cursor: { drag: { x: false, y: false } },
      scales: { x: { time: false } },
      axes: [{ label: 'µs from the edge’s 50 % point' }, { label: `Output, ${plot.unit}`, size: 60 }],
      series: [
        {},
        { label: 'Record', stroke: '#1f5fa8', width: 1.5, points: { show: false } },
        { label: 'Fitted envelope', stroke: '#b04a2f', width: 1, dash: [6, 4], points: { show: false } },
        { label: 'Fitted envelope', stroke: '#b04a2f', width: 1, dash: [6, 4], points: { show: false } },
      ],
    }),
    // The chart keeps its options for life; a new record remounts it (by key).
    // eslint-disable-next-line react-hooks/exhaustive-deps
    [],
  );
  return (
    <figure className="ringing-plot" data-testid="ringing-plot">
      <UPlotChart options={options} data={data} label={`A ${plot.polarity} edge of ${fileName}${plot.envelope ? ' with the envelope fitted to its ringing' : ', which shows no ringing'}`} />
      <figcaption className="hint">
        A {plot.polarity} edge of “{fileName}”{plot.envelope ? '; dashed: the envelope fitted to its ringing peaks' : '; no ringing above the noise, so no envelope'}.
      </figcaption>
    </figure>
  );
}
