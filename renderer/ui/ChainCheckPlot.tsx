// The chain's frequency response from the stepped sine, relative to its 1 kHz step, with the
// station's ±flatness band drawn over the band it is judged on.

import { useMemo } from 'react';
import type uPlot from 'uplot';
import type { ChainResponse } from '../../shared/calibration/chain-response.ts';
import { UPlotChart } from './UPlotChart.tsx';

export function ChainCheckPlot({
  response,
  flatnessDb,
  bandLowHz,
  bandHighHz,
}: {
  response: ChainResponse;
  flatnessDb: number;
  bandLowHz: number;
  bandHighHz: number;
}) {
  const points = response.points;
  // The band's lines exist only inside the judged band; null leaves a gap outside it.
  const data = useMemo<uPlot.AlignedData>(() => {
    const hz = points.map((p) => p.frequencyHz);
    const inBand = (f: number) => f >= bandLowHz * 0.95 && f <= bandHighHz * 1.05;
    return [hz, points.map((p) => p.relativeDb), hz.map((f) => (inBand(f) ? flatnessDb : null)), hz.map((f) => (inBand(f) ? -flatnessDb : null))];
  }, [points, flatnessDb, bandLowHz, bandHighHz]);
  // Wide enough for the band and for whatever the chain did (a steep roll-off at 10 Hz).
  const worst = Math.max(flatnessDb * 2, ...points.map((p) => Math.abs(p.relativeDb)));
  const limit = Math.ceil(worst * 1.2 * 10) / 10;
  const options = useMemo<Omit<uPlot.Options, 'width' | 'height'> & { height: number }>(
    () => ({
      height: 220,
      legend: { show: false },
      cursor: { drag: { x: false, y: false } },
      scales: { x: { time: false, distr: 3, range: (_u, min, max) => [min, max] }, y: { range: [-limit, limit] } },
      axes: [{ label: 'Hz' }, { label: 'dB re 1 kHz', size: 60 }],
      series: [
        {},
        { label: 'Response', stroke: '#1f5fa8', width: 2, points: { show: true, size: 5 } },
        { label: `+${flatnessDb} dB`, stroke: '#b04a2f', width: 1, dash: [6, 4], points: { show: false } },
        { label: `−${flatnessDb} dB`, stroke: '#b04a2f', width: 1, dash: [6, 4], points: { show: false } },
      ],
    }),
    // The chart keeps its options for life; the panel remounts it (by key) when the limits change.
    // eslint-disable-next-line react-hooks/exhaustive-deps
    [],
  );
  return (
    <UPlotChart
      options={options}
      data={data}
      label={`Chain frequency response relative to ${response.referenceHz} Hz, with the ±${flatnessDb} dB flatness band from ${bandLowHz} Hz to ${bandHighHz} Hz`}
    />
  );
}
