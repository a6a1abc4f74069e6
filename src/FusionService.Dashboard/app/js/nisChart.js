// NIS strip chart of one sensor (uPlot): the values over time, gated ones apart, over the chi-square 95 % band.
import uPlot from '../lib/uplot/uPlot.esm.js';
import { chiSquareUpper95 } from './chiSquare.js';

const BAND_FILL = 'rgba(64, 145, 108, 0.16)';

/**
 * Draws a chart into container.
 * @param {HTMLElement} container
 * @param {{title: string, dof: number, samples: {timeS: number, nis: number, gated: boolean}[], gate?: number,
 *          meanInterval?: {lower: number, upper: number}}} spec
 * @returns {uPlot | null}
 */
export function drawNisChart(container, spec) {
  container.innerHTML = '';
  const samples = spec.samples.filter((s) => Number.isFinite(s.nis) && Number.isFinite(s.timeS)).sort((a, b) => a.timeS - b.timeS);
  container.dataset.points = String(samples.length);
  container.dataset.dof = String(spec.dof);
  if (samples.length === 0) {
    container.innerHTML = `<p class="muted">${spec.title}: no NIS values in this window.</p>`;
    return null;
  }
  const upper = chiSquareUpper95(spec.dof);
  const times = samples.map((s) => s.timeS);
  const zero = times.map(() => 0);
  const band = times.map(() => upper);
  const accepted = samples.map((s) => (s.gated ? null : s.nis));
  const gated = samples.map((s) => (s.gated ? s.nis : null));
  const gate = times.map(() => spec.gate ?? null);
  const width = Math.max(280, (container.clientWidth || 440) - 8);
  const options = {
    title: spec.title,
    width,
    height: 170,
    scales: { x: { time: true }, y: { distr: 3, log: 10, range: (u, min, max) => [0.01, Math.max(max ?? 1, (upper ?? 1) * 1.5, (spec.gate ?? 0) * 1.2)] } },
    axes: [
      { stroke: '#475569', grid: { stroke: '#ece8df' }, values: (u, splits) => splits.map((t) => new Date(t * 1000).toISOString().slice(11, 19)) },
      { stroke: '#475569', grid: { stroke: '#ece8df' }, label: 'NIS (log)', size: 56 },
    ],
    legend: { show: true, live: false },
    cursor: { points: { show: false } },
    series: [
      {},
      { label: upper ? `95 % band (χ², ${spec.dof} dof)` : 'band unknown', stroke: 'rgba(64,145,108,0.7)', width: 1, points: { show: false } },
      { label: 'floor', stroke: 'transparent', points: { show: false } },
      { label: 'accepted', stroke: '#1d4e89', paths: () => null, points: { show: true, size: 5, fill: '#1d4e89', stroke: '#1d4e89' } },
      { label: 'gated', stroke: '#c2410c', paths: () => null, points: { show: true, size: 7, fill: '#ffffff', stroke: '#c2410c', width: 2 } },
      { label: 'gate', stroke: '#9a3412', dash: [6, 4], width: 1, points: { show: false } },
    ],
    bands: upper ? [{ series: [1, 2], fill: BAND_FILL }] : [],
  };
  // Log scale: zero cannot be drawn, so the band's floor sits at the axis minimum.
  const floor = zero.map(() => 0.01);
  const chart = new uPlot(options, [times, band, floor, accepted, gated, gate], container);
  for (const row of container.querySelectorAll('.u-legend .u-series')) {
    if (row.textContent.trim() === 'floor') row.style.display = 'none';
  }
  if (spec.meanInterval) {
    const note = document.createElement('p');
    note.className = 'muted small';
    note.textContent = `Mean NIS should lie in [${spec.meanInterval.lower.toFixed(2)}, ${spec.meanInterval.upper.toFixed(2)}] for this window (service's 95 % interval).`;
    container.appendChild(note);
  }
  return chart;
}
