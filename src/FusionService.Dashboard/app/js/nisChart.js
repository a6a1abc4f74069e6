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
  const width = Math.max(280, container.clientWidth || 420);
  const options = {
    title: spec.title,
    width,
    height: 170,
    scales: { x: { time: true }, y: { distr: 3, log: 10, range: (u, min, max) => [Math.max(1e-3, Math.min(min, 0.01)), Math.max(max, (upper ?? 1) * 1.5)] } },
    axes: [{ stroke: '#475569' }, { stroke: '#475569', label: 'NIS', size: 56 }],
    legend: { show: true, live: false },
    cursor: { points: { show: false } },
    series: [
      {},
      { label: upper ? `95 % band (χ², ${spec.dof} dof)` : 'band unknown', stroke: 'rgba(64,145,108,0.7)', width: 1, points: { show: false } },
      { label: '', stroke: 'transparent', points: { show: false } },
      { label: 'accepted', stroke: '#1d4e89', paths: () => null, points: { show: true, size: 5, fill: '#1d4e89', stroke: '#1d4e89' } },
      { label: 'gated', stroke: '#c2410c', paths: () => null, points: { show: true, size: 7, fill: '#ffffff', stroke: '#c2410c', width: 2 } },
      { label: 'gate', stroke: '#9a3412', dash: [6, 4], width: 1, points: { show: false } },
    ],
    bands: upper ? [{ series: [1, 2], fill: BAND_FILL }] : [],
  };
  // Log scale: zero cannot be drawn, so the band's floor sits at the axis minimum.
  const floor = zero.map(() => 1e-3);
  const chart = new uPlot(options, [times, band, floor, accepted, gated, gate], container);
  if (spec.meanInterval) {
    const note = document.createElement('p');
    note.className = 'muted small';
    note.textContent = `Mean NIS should lie in [${spec.meanInterval.lower.toFixed(2)}, ${spec.meanInterval.upper.toFixed(2)}] for this window (service's 95 % interval).`;
    container.appendChild(note);
  }
  return chart;
}
