import { useMemo } from 'react';
import type uPlot from 'uplot';
import { UPlotChart } from './UPlotChart.tsx';

const OPTIONS: Omit<uPlot.Options, 'width' | 'height'> & { height: number } = {
  height: 240,
  legend: { show: false },
  cursor: { drag: { x: false, y: false } },
  // x follows the data (5 Hz to Nyquist) rather than rounding out to a decade past it.
  scales: { x: { time: false, distr: 3, range: (_u, min, max) => [min, max] }, y: { range: [-180, 0] } },
  axes: [{ label: 'Hz' }, { label: 'dBFS', size: 60 }],
  series: [{}, { stroke: '#1f5fa8', width: 1, points: { show: false } }],
};

export function SpectrumPlot({ spectrumHz, spectrumDbfs }: { spectrumHz: Float32Array | null; spectrumDbfs: Float32Array | null }) {
  // Columns are labelled by their lower edge; the worker sends one more edge than levels.
  const data = useMemo<uPlot.AlignedData>(
    () => (spectrumHz && spectrumDbfs ? [spectrumHz.subarray(0, spectrumDbfs.length), spectrumDbfs] : [[], []]),
    [spectrumHz, spectrumDbfs],
  );
  return (
    <section className="panel" aria-label="Spectrum">
      <h2>Spectrum</h2>
      <UPlotChart options={OPTIONS} data={data} label="Spectrum of the captured signal, level against frequency" />
    </section>
  );
}
