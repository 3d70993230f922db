import { useMemo } from 'react';
import type uPlot from 'uplot';
import type { TrimPoint } from '../../shared/ipc/contract.ts';
import { trimPointData, type TrimAssessment } from '../../shared/trim/assessment.ts';
import { UPlotChart } from './UPlotChart.tsx';

/** Marks the plot draws over the data: the over-compensation side, the null's band, the recommendation. */
interface TrimMarks {
  nullPosition: number | null;
  nullPlusMinus: number | null;
  recommendedPosition: number | null;
  positionMax: number;
}

function drawMarks(marks: TrimMarks) {
  return (u: uPlot) => {
    const { ctx } = u;
    const { top, height, left, width } = u.bbox;
    // Clamped to the plotting area: a band or line far outside the trimmer's range stays inside the axes.
    const x = (value: number) => Math.min(left + width, Math.max(left, u.valToPos(value, 'x', true)));
    ctx.save();
    if (marks.nullPosition !== null) {
      // Over-compensation: everything past the null, shaded so it cannot be missed.
      ctx.fillStyle = 'rgba(163, 38, 27, 0.10)';
      ctx.fillRect(x(marks.nullPosition), top, x(marks.positionMax) - x(marks.nullPosition), height);
      if (marks.nullPlusMinus !== null) {
        ctx.fillStyle = 'rgba(31, 95, 168, 0.18)';
        const from = x(marks.nullPosition - marks.nullPlusMinus);
        ctx.fillRect(from, top, Math.max(1, x(marks.nullPosition + marks.nullPlusMinus) - from), height);
      }
      ctx.strokeStyle = '#1f5fa8';
      ctx.setLineDash([4, 3]);
      ctx.beginPath();
      ctx.moveTo(x(marks.nullPosition), top);
      ctx.lineTo(x(marks.nullPosition), top + height);
      ctx.stroke();
    }
    if (marks.recommendedPosition !== null) {
      ctx.strokeStyle = '#23703a';
      ctx.lineWidth = 2;
      ctx.setLineDash([]);
      ctx.beginPath();
      ctx.moveTo(x(marks.recommendedPosition), top);
      ctx.lineTo(x(marks.recommendedPosition), top + height);
      ctx.stroke();
    }
    ctx.restore();
  };
}

/**
 * The trim curve: the trimmed harmonic at each recorded point, the fitted model, the null with its
 * uncertainty, the over-compensation side shaded, the recommended setting in green.
 */
export function TrimPlot({
  points,
  assessment,
  harmonicOrder,
  positionMin,
  positionMax,
  positionUnit,
  height = 240,
}: {
  points: TrimPoint[];
  assessment: TrimAssessment | null;
  harmonicOrder: number;
  positionMin: number;
  positionMax: number;
  /** The procedure's unit of trimmer position (e.g. turns). */
  positionUnit: string;
  height?: number;
}) {
  const marks: TrimMarks = {
    nullPosition: assessment?.nullPosition ?? null,
    nullPlusMinus: assessment?.nullPositionPlusMinus ?? null,
    recommendedPosition: assessment?.recommendedPosition ?? null,
    positionMax,
  };
  // The chart is rebuilt when the marks change (after each recorded point), not on every reading.
  const key = JSON.stringify(marks);
  const options = useMemo<Omit<uPlot.Options, 'width' | 'height'> & { height: number }>(
    () => ({
      height,
      legend: { show: false },
      scales: {
        x: { time: false, range: [positionMin, positionMax] },
        y: {
          // At least a 20 dB span, so readings that agree within a few tenths do not look like a curve.
          range: (_chart, min, max) => {
            const middle = (min + max) / 2;
            const half = Math.max(10, (max - min) / 2 + 3);
            return [middle - half, middle + half];
          },
        },
      },
      axes: [{ label: `Trimmer position, ${positionUnit}` }, { label: `H${harmonicOrder}, dBc`, size: 60 }],
      series: [
        {},
        { label: 'fitted model', stroke: '#1f5fa8', width: 1.5, points: { show: false }, spanGaps: true },
        { label: 'trim points', stroke: 'transparent', points: { show: true, size: 9, fill: '#b0461f', stroke: '#b0461f' } },
      ],
      hooks: { draw: [drawMarks(marks)] },
    }),
    // eslint-disable-next-line react-hooks/exhaustive-deps
    [key, harmonicOrder, positionMin, positionMax, positionUnit, height],
  );
  const data = useMemo<uPlot.AlignedData>(() => {
    // One x axis for both series: the model's samples and the points' positions, merged.
    const curve = assessment?.curve ?? [];
    // The point as the fit took it (one policy for a missing harmonic: trimPointData).
    const level = (point: TrimPoint) => trimPointData(point.position, point.reading, harmonicOrder).levelDbc;
    const rows = [
      ...curve.map((c) => ({ x: c.position, model: c.levelDbc as number | null, point: null as number | null })),
      ...points.map((p) => ({ x: p.position, model: null, point: level(p) })),
    ].sort((a, b) => a.x - b.x);
    return [rows.map((r) => r.x), rows.map((r) => r.model), rows.map((r) => r.point)];
  }, [points, assessment, harmonicOrder]);
  return (
    <figure className="trim-figure">
      <UPlotChart
        key={key}
        options={options}
        data={data}
        label={`H${harmonicOrder} against trimmer position: recorded points, fitted curve, null and recommended setting`}
      />
      {/* Drawn by hand: the marks are canvas drawings that uPlot's own legend does not know. */}
      <figcaption className="legend" data-testid="trim-legend">
        <span><i className="swatch point" /> recorded point (H{harmonicOrder})</span>
        {(assessment?.curve.length ?? 0) > 0 && <span><i className="swatch fit" /> fitted curve</span>}
        {marks.nullPosition !== null && <span><i className="swatch null" /> null ± uncertainty</span>}
        {marks.nullPosition !== null && <span><i className="swatch past" /> past the null (over-compensated)</span>}
        {marks.recommendedPosition !== null && <span><i className="swatch recommended" /> recommended setting</span>}
      </figcaption>
    </figure>
  );
}
