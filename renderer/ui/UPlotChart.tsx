// One uPlot instance per mounted chart. Options are fixed at mount; data updates go through
// setData (one batched redraw), so a chart fed several times a second never rebuilds.

import { useEffect, useRef } from 'react';
import uPlot from 'uplot';

export function UPlotChart({
  options,
  data,
  label,
}: {
  options: Omit<uPlot.Options, 'width' | 'height'> & { height: number };
  data: uPlot.AlignedData;
  label: string;
}) {
  const hostRef = useRef<HTMLDivElement>(null);
  const chartRef = useRef<uPlot | null>(null);

  useEffect(() => {
    const host = hostRef.current!;
    const chart = new uPlot({ ...options, width: Math.max(200, host.clientWidth) }, data, host);
    chartRef.current = chart;
    const resize = new ResizeObserver(() => chart.setSize({ width: Math.max(200, host.clientWidth), height: options.height }));
    resize.observe(host);
    return () => {
      resize.disconnect();
      chart.destroy();
      chartRef.current = null;
    };
    // Options are fixed for the chart's life; data flows through the effect below.
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, []);

  useEffect(() => {
    chartRef.current?.setData(data);
  }, [data]);

  return <div className="chart" ref={hostRef} role="img" aria-label={label} />;
}
