// Vehicle view: raw fixes (gated ones marked apart), filtered and smoothed paths, a time scrubber, the explanation of a
// point, NIS strip charts per sensor, calibration estimates and the distance summary.
import { d3 } from './d3.js';
import { describeError, getJson, query } from './api.js';
import { LocalMap } from './localMap.js';
import { centroid, createFrame, ellipseRotationSvgDeg } from './localFrame.js';
import { drawNisChart } from './nisChart.js';
import {
  age, axes, clock, clockTenths, compassWords, dateTime, distance, duration, escapeHtml, fromPickerValue, length, num, rawValue,
  residualValue, SENSOR_WORDS, speed, startOfDayMs, toPickerValue, VERDICT_WORDS, WHITENESS_WORDS, zoneLabel,
} from './format.js';
import { STANDING_BELOW_MPS } from './fleetView.js';

const EXPLAIN_WINDOW_S = 10;
const NIS_WINDOW_S = 120;
/** The history endpoints' longest window (Tracks:MaxWindowHours, default 24 h). */
const MAX_WINDOW_MS = 24 * 3_600_000;
/** A live window is fetched again this often (the history endpoints are heavier than the fleet list). */
const LIVE_REFRESH_MS = 5_000;

/** Spacing of the points asked for, seconds, by window length: every point up to 30 min, sparser for a shift or a day. */
export function stepForWindowS(windowMs) {
  if (windowMs <= 30 * 60_000) return null;
  if (windowMs <= 2 * 3_600_000) return 1;
  if (windowMs <= 8 * 3_600_000) return 5;
  return 15;
}

/**
 * The window to show: the newest N minutes or the day of the newest estimate (both follow new data), or a picked
 * from..to (follows new data when it ends at or after now).
 */
export function chooseWindow(choice, newestMs, nowMs) {
  if (choice.mode === 'custom') {
    return { fromMs: choice.fromMs, toMs: choice.toMs, live: choice.toMs >= nowMs };
  }
  if (choice.mode === 'day') {
    const fromMs = startOfDayMs(newestMs);
    return { fromMs, toMs: Math.max(newestMs, fromMs + 1000), live: true };
  }
  return { fromMs: newestMs - Number(choice.mode) * 60_000, toMs: newestMs, live: true };
}

export class VehicleView {
  constructor(root, settings, fleetFrame, baseLayer) {
    this.root = root;
    this.baseLayer = baseLayer;
    this.settings = settings;
    this.fleetFrame = fleetFrame;
    this.vehicle = null;
    this.tracks = { raw: [], filtered: [], smoothed: [] };
    this.diagnostics = null;
    this.selectedMs = null;
    this.map = new LocalMap(root.querySelector('#vehicle-map'), (map) => this.draw(map));
    this.line = d3.line().x((p) => this.map.x(p.eastM)).y((p) => this.map.y(p.northM));
    this.scrubber = root.querySelector('#scrubber');
    this.scrubber.addEventListener('input', () => this.select(Number(this.scrubber.value), false));
    this.scrubber.addEventListener('change', () => this.select(Number(this.scrubber.value), true));
    this.choice = { mode: '30' };
    this.loads = 0;
    const select = root.querySelector('#vehicle-window');
    select.addEventListener('change', () => {
      if (select.value === 'custom') {
        // Start from the window on show; the reader moves its ends and presses "Show this window".
        root.querySelector('#window-from').focus();
        return;
      }
      this.choice = { mode: select.value };
      this.load();
    });
    for (const id of ['#window-from', '#window-to']) {
      root.querySelector(id).addEventListener('input', () => { select.value = 'custom'; });
    }
    root.querySelector('#window-form').addEventListener('submit', (event) => {
      event.preventDefault();
      this.applyPickers();
    });
    root.querySelector('#vehicle-refresh').addEventListener('click', () => this.load());
    root.querySelector('#vehicle-fit').addEventListener('click', () => this.fit());
    this.explainTimer = null;
    this.liveTimer = null;
  }

  /** Opens a van; params may carry from, to (a window) and at (the time to select), as the alert links do. */
  async open(vehicle, params = {}) {
    if (this.vehicle !== vehicle) {
      this.vehicle = vehicle;
      this.frame = null;
      this.selectedMs = null;
      this.window = null;
      this.explained = null;
    }
    const fromMs = Date.parse(params.from ?? '');
    const toMs = Date.parse(params.to ?? '');
    if (this.choice.mode === 'custom' && !params.from) {
      // Opened from the fleet: the newest half hour again, not a window picked for another visit.
      this.choice = { mode: '30' };
      this.root.querySelector('#vehicle-window').value = '30';
    }
    if (Number.isFinite(fromMs) && Number.isFinite(toMs) && fromMs < toMs) {
      this.choice = { mode: 'custom', fromMs, toMs: Math.min(toMs, fromMs + MAX_WINDOW_MS) };
      this.root.querySelector('#vehicle-window').value = 'custom';
      const atMs = Date.parse(params.at ?? '');
      this.selectedMs = Number.isFinite(atMs) ? atMs : null;
    }
    this.root.querySelector('#vehicle-name').textContent = vehicle;
    await this.load();
  }

  /** Leaves the view: no more live refreshes. */
  close() {
    clearTimeout(this.liveTimer);
    this.liveTimer = null;
    this.vehicle = null;
  }

  /** Reads the from/to pickers (in the reader's zone) and shows that window. */
  applyPickers() {
    const fromMs = fromPickerValue(this.root.querySelector('#window-from').value);
    const toMs = fromPickerValue(this.root.querySelector('#window-to').value);
    let problem = null;
    if (!Number.isFinite(fromMs)) problem = 'from: pick a date and time';
    else if (!Number.isFinite(toMs)) problem = 'to: pick a date and time';
    else if (toMs <= fromMs) problem = 'to: must be after from';
    else if (toMs - fromMs > MAX_WINDOW_MS) problem = `to: at most ${duration(MAX_WINDOW_MS / 1000)} after from (the service's longest window)`;
    if (problem) {
      this.set('#vehicle-status', `<span class="not-available">${escapeHtml(problem)}</span>`);
      return;
    }
    this.root.querySelector('#vehicle-window').value = 'custom';
    this.choice = { mode: 'custom', fromMs, toMs };
    this.selectedMs = null;
    this.load();
  }

  /** Re-draws times and units after a preference changed (the explanation shown too, without asking for it again). */
  redraw() {
    if (!this.vehicle || !this.window) return;
    if (this.explained) this.renderExplanation(this.explained);
    this.load();
  }

  set(id, html) {
    this.root.querySelector(id).innerHTML = html;
  }

  async load() {
    const vehicle = this.vehicle;
    if (!vehicle) return;
    clearTimeout(this.liveTimer);
    const v = encodeURIComponent(vehicle);
    const following = this.window && this.selectedMs === this.window.toMs;
    if (!this.window) this.set('#vehicle-status', 'Loading…');
    let state;
    try {
      state = await getJson(`/v1/vehicles/${v}/state`);
    } catch (error) {
      this.set('#vehicle-status', escapeHtml(describeError(error, 'State')));
      return;
    }
    if (vehicle !== this.vehicle) return;
    const newestMs = Date.parse(state.time);
    const { fromMs, toMs, live } = chooseWindow(this.choice, newestMs, Date.now());
    // A selection at the newest time follows the newest time on refresh.
    if (following) this.selectedMs = toMs;
    const first = !this.window || this.window.fromMs !== fromMs || this.window.live !== live;
    this.window = { fromMs, toMs, live };
    const range = { from: new Date(fromMs).toISOString(), to: new Date(toMs).toISOString() };
    this.scrubber.min = String(fromMs);
    this.scrubber.max = String(toMs);
    this.scrubber.step = '100';
    if (this.selectedMs === null || this.selectedMs < fromMs || this.selectedMs > toMs) this.selectedMs = toMs;
    this.scrubber.value = String(this.selectedMs);
    if (document.activeElement?.type !== 'datetime-local') {
      this.root.querySelector('#window-from').value = toPickerValue(fromMs);
      this.root.querySelector('#window-to').value = toPickerValue(toMs);
    }
    this.root.querySelector('#window-zone').textContent = `times in ${zoneLabel(toMs)}`;
    this.root.querySelector('#window-live').hidden = !live;
    Object.assign(this.root.dataset, { fromMs: String(fromMs), toMs: String(toMs), live: String(live) });
    this.set('#vehicle-status', `${escapeHtml(dateTime(fromMs))} to ${escapeHtml(dateTime(toMs))} (${escapeHtml(duration((toMs - fromMs) / 1000))}). `
      + `Newest estimate ${escapeHtml(clock(state.time))}, ${escapeHtml(age(state.time))}.`
      + (live ? ' Follows new data.' : ' A past window: not refreshed.'));

    const windowMs = toMs - fromMs;
    const step = stepForWindowS(windowMs);
    const rawStep = windowMs > 2 * 3_600_000 ? step : null;
    const track = (kind, s) => getJson(`/v1/vehicles/${v}/track${query({ ...range, kind, step: s, format: 'json' })}`);
    const [raw, filtered, smoothed, diagnostics, distance] = await Promise.allSettled([
      track('raw', rawStep), track('filtered', step), track('smoothed', step),
      getJson(`/v1/vehicles/${v}/diagnostics${query(range)}`),
      getJson(`/v1/vehicles/${v}/distance${query(range)}`),
    ]);
    if (vehicle !== this.vehicle) return;

    const notes = [];
    const points = (result, what) => {
      if (result.status === 'fulfilled') return result.value.points ?? [];
      notes.push(describeError(result.reason, what));
      return [];
    };
    this.tracks = {
      raw: points(raw, 'Raw fixes'),
      filtered: points(filtered, 'Filtered path'),
      smoothed: points(smoothed, 'Smoothed path'),
    };
    this.state = state;
    if (!this.frame) {
      const c = this.fleetFrame() ?? centroid([state, ...this.tracks.smoothed]);
      this.frame = this.fleetFrame() ?? createFrame(c.latDeg, c.lonDeg);
      this.map.setFrame(this.frame, this.settings.tile_url_template);
      this.baseLayer?.attach(this.map, this.frame);
    }
    for (const kind of ['raw', 'filtered', 'smoothed']) {
      for (const p of this.tracks[kind]) {
        Object.assign(p, this.frame.toLocal(p.lat_deg, p.lon_deg));
        p.timeMs = Date.parse(p.time);
      }
    }
    this.set('#track-notes', notes.map((n) => `<p class="not-available">${escapeHtml(n)}</p>`).join(''));
    this.renderLegendCounts();
    if (first || !this.map.userMoved) this.fit();

    this.diagnostics = diagnostics.status === 'fulfilled' ? diagnostics.value : null;
    this.renderDiagnostics(diagnostics);
    this.renderWhiteness(diagnostics);
    this.renderCalibration();
    this.renderDistance(distance);
    this.renderGnssNis();
    this.select(this.selectedMs, first || following);
    this.loads += 1;
    this.root.dataset.loads = String(this.loads);
    if (live && this.vehicle === vehicle) this.liveTimer = setTimeout(() => this.load(), LIVE_REFRESH_MS);
  }

  fit() {
    const all = [...this.tracks.smoothed, ...this.tracks.filtered, ...this.tracks.raw.filter((p) => p.outcome !== 'gated')];
    if (all.length === 0 && this.state) all.push(this.frame.toLocal(this.state.lat_deg, this.state.lon_deg));
    this.map.fit(all, 100);
  }

  renderLegendCounts() {
    const gated = this.tracks.raw.filter((p) => p.outcome === 'gated').length;
    const step = this.window ? stepForWindowS(this.window.toMs - this.window.fromMs) : null;
    this.set('#legend-counts', `${this.tracks.raw.length} raw fixes (${gated} gated), ${this.tracks.filtered.length} filtered and `
      + `${this.tracks.smoothed.length} smoothed points in the window${step ? ` (at most one per ${step} s${step > 1 ? ', raw fixes too' : ''})` : ''}.`);
  }

  /** Moves the scrubber to timeMs; with explain, loads the explanation panel for that time. */
  select(timeMs, explain) {
    if (!Number.isFinite(timeMs)) return;
    this.selectedMs = timeMs;
    this.scrubber.value = String(timeMs);
    this.root.querySelector('#scrubber-time').textContent = dateTime(timeMs);
    this.map.render();
    if (explain) {
      clearTimeout(this.explainTimer);
      this.explainTimer = setTimeout(() => this.loadExplanation(timeMs), 150);
    }
  }

  nearest(points, timeMs) {
    if (points.length === 0) return null;
    const i = d3.bisector((p) => p.timeMs).center(points, timeMs);
    return points[i];
  }

  draw(map) {
    if (!this.frame) return;
    const layers = map.layers;
    const raw = this.tracks.raw;
    const fixes = layers.selectAll('g.fixes').data([0]).join('g').attr('class', 'fixes');
    fixes.selectAll('circle.fix').data(raw.filter((p) => p.outcome !== 'gated'), (p) => p.time).join('circle')
      .attr('class', (p) => `fix ${p.outcome === 'accepted' ? 'fix-accepted' : 'fix-other'}`)
      .attr('r', 2.6).attr('cx', (p) => map.x(p.eastM)).attr('cy', (p) => map.y(p.northM))
      .on('click', (event, p) => this.select(p.timeMs, true))
      .selectAll('title').data((p) => [p]).join('title').text((p) => `${clock(p.time)} ${p.outcome}, NIS ${num(p.nis, 2)}`);
    fixes.selectAll('path.fix-gated').data(raw.filter((p) => p.outcome === 'gated'), (p) => p.time).join('path')
      .attr('class', 'fix fix-gated').attr('d', 'M-5,-5 L5,5 M-5,5 L5,-5')
      .attr('transform', (p) => `translate(${map.x(p.eastM)},${map.y(p.northM)})`)
      .on('click', (event, p) => this.select(p.timeMs, true))
      .selectAll('title').data((p) => [p]).join('title').text((p) => `${clock(p.time)} gated, NIS ${num(p.nis, 1)}`);

    const paths = [['filtered', 'filtered-path'], ['smoothed', 'smoothed-path']];
    for (const [kind, id] of paths) {
      const pts = this.tracks[kind];
      layers.selectAll(`path#${id}`).data([pts]).join('path').attr('id', id).attr('class', `track ${id}`)
        .attr('data-points', pts.length).attr('d', pts.length > 1 ? this.line(pts) : null)
        .attr('data-first-ms', pts.length ? pts[0].timeMs : null).attr('data-last-ms', pts.length ? pts[pts.length - 1].timeMs : null);
    }
    // Paths above the fixes; the selection marker above both.
    layers.selectAll('g.selected').raise();
    // Without a track (its endpoint missing), the marker shows the current estimate.
    const current = this.state ? { ...this.state, ...this.frame.toLocal(this.state.lat_deg, this.state.lon_deg) } : null;
    const selected = this.nearest(this.tracks.smoothed, this.selectedMs) ?? this.nearest(this.tracks.filtered, this.selectedMs) ?? current;
    const marker = layers.selectAll('g.selected').data(selected ? [selected] : []).join((enter) => {
      const g = enter.append('g').attr('class', 'selected');
      g.append('ellipse').attr('class', 'selected-ellipse');
      g.append('circle').attr('r', 4).attr('class', 'selected-dot');
      return g;
    });
    const k = map.pxPerM();
    marker.attr('transform', (p) => `translate(${map.x(p.eastM)},${map.y(p.northM)})`);
    marker.select('ellipse')
      .attr('rx', (p) => (p.ellipse95?.semi_major_m ?? 0) * k).attr('ry', (p) => (p.ellipse95?.semi_minor_m ?? 0) * k)
      .attr('transform', (p) => `rotate(${ellipseRotationSvgDeg(p.ellipse95?.orientation_deg ?? 0)})`);
    // Clicks on the paths pick the nearest point in time along them.
    layers.selectAll('path.track').on('click', (event) => {
      const [px, py] = d3.pointer(event, map.svg.node());
      const pts = this.tracks.smoothed.length ? this.tracks.smoothed : this.tracks.filtered;
      const best = d3.least(pts, (p) => (map.x(p.eastM) - px) ** 2 + (map.y(p.northM) - py) ** 2);
      if (best) this.select(best.timeMs, true);
    });
  }

  async loadExplanation(timeMs) {
    const v = encodeURIComponent(this.vehicle);
    const time = new Date(timeMs).toISOString();
    const panel = '#explain-panel';
    this.set(panel, `<p class="muted">Loading the explanation for ${dateTime(time)}…</p>`);
    let explained;
    try {
      explained = await getJson(`/v1/vehicles/${v}/explain${query({ time, window_s: EXPLAIN_WINDOW_S })}`);
    } catch (error) {
      this.explained = null;
      this.set(panel, `<p class="not-available">${escapeHtml(describeError(error, 'Explanation'))}</p>`);
    }
    if (explained) {
      this.explained = explained;
      this.renderExplanation(explained);
    }
    await this.renderOtherNis(timeMs);
  }

  renderExplanation(e) {
    const s = e.state ?? {};
    this.set('#explain-plain', escapeHtml(plainExplanation(e)));
    const rows = (e.measurements ?? []).map((m) => `
      <tr class="decision-${escapeHtml(m.decision)}">
        <td>${clockTenths(m.time)}</td><td>${escapeHtml(SENSOR_WORDS[m.sensor] ?? m.sensor)}</td>
        <td class="values">${Object.entries(m.values ?? {}).map(([k, val]) => {
          const shown = rawValue(k, val);
          return `<span class="raw-value" data-key="${escapeHtml(k)}" data-si="${escapeHtml(String(val))}">${escapeHtml(`${shown.name} ${shown.text}`)}</span>`;
        }).join(', ')}</td>
        <td class="n">${escapeHtml((m.residual ?? []).map((r, i) => residualValue(r, m.residual_units?.[i])).join(', '))}</td>
        <td class="n">${num(m.nis, 2)}${m.nis_dof ? ` / ${m.nis_dof}` : ''}</td>
        <td class="n">${num(m.gate_threshold, 2)}</td>
        <td>${escapeHtml(m.decision)}</td>
        <td class="n">${length(m.position_shift_m, 2)}</td>
      </tr>`).join('');
    this.set('#explain-panel', `
      <p>Estimate at ${dateTime(s.time)}: ${num(s.lat_deg, 6)}°, ${num(s.lon_deg, 6)}°, heading ${num(s.heading_deg, 0, '°')},
         ${speed(s.speed_mps, 1)}, 95 % ellipse ${axes(s.ellipse95?.semi_major_m, s.ellipse95?.semi_minor_m)}.</p>
      <div class="scroll"><table class="grid small"><thead><tr><th>time (${escapeHtml(zoneLabel(s.time))})</th><th>sensor</th><th>values</th><th>residual</th><th>NIS / dof</th>
        <th>gate</th><th>decision</th><th>moved the estimate</th></tr></thead><tbody>${rows || '<tr><td colspan="8">no measurements in this window</td></tr>'}</tbody></table></div>`);
  }

  sensorDiagnostics(sensor) {
    return this.diagnostics?.sensors?.find((s) => s.sensor === sensor) ?? null;
  }

  renderGnssNis() {
    const container = this.root.querySelector('#nis-gnss_position');
    const samples = this.tracks.raw.filter((p) => Number.isFinite(p.nis))
      .map((p) => ({ timeS: p.timeMs / 1000, nis: p.nis, gated: p.outcome === 'gated' }));
    const d = this.sensorDiagnostics('gnss_position');
    if (this.tracks.raw.length === 0) {
      container.dataset.points = '0';
      container.innerHTML = '<p class="not-available">GNSS position NIS: not available (no raw fixes from this service).</p>';
      return;
    }
    drawNisChart(container, {
      title: 'GNSS position — NIS of each fix in the window', dof: d?.nis_dof ?? 2, samples,
      meanInterval: d?.nis_interval,
    });
  }

  /** NIS of the other sensors around the scrubber time, from the explanation endpoint. */
  async renderOtherNis(timeMs) {
    const v = encodeURIComponent(this.vehicle);
    const sensors = ['gnss_velocity', 'wheel', 'imu'];
    let measurements = null;
    let failure = null;
    try {
      const e = await getJson(`/v1/vehicles/${v}/explain${query({ time: new Date(timeMs).toISOString(), window_s: NIS_WINDOW_S })}`);
      measurements = e.measurements ?? [];
    } catch (error) {
      failure = describeError(error, 'NIS of the other sensors');
    }
    for (const sensor of sensors) {
      const container = this.root.querySelector(`#nis-${sensor}`);
      if (failure) {
        container.dataset.points = '0';
        container.innerHTML = `<p class="not-available">${escapeHtml(SENSOR_WORDS[sensor])}: ${escapeHtml(failure)}</p>`;
        continue;
      }
      const own = measurements.filter((m) => m.sensor === sensor && Number.isFinite(m.nis));
      const d = this.sensorDiagnostics(sensor);
      drawNisChart(container, {
        title: `${SENSOR_WORDS[sensor]} — NIS in the ${NIS_WINDOW_S} s window of the scrubber time`,
        dof: own[0]?.nis_dof ?? d?.nis_dof ?? 1,
        samples: own.map((m) => ({ timeS: Date.parse(m.time) / 1000, nis: m.nis, gated: m.decision === 'gated' })),
        gate: own[0]?.gate_threshold,
        meanInterval: d?.nis_interval,
      });
    }
  }

  renderDiagnostics(result) {
    if (result.status !== 'fulfilled') {
      this.set('#diagnostics-panel', `<p class="not-available">${escapeHtml(describeError(result.reason, 'Diagnostics'))}</p>`);
      return;
    }
    const d = result.value;
    const rows = (d.sensors ?? []).map((s) => `
      <tr><td>${escapeHtml(SENSOR_WORDS[s.sensor] ?? s.sensor)}</td><td class="n">${s.accepted ?? '—'}</td><td class="n">${s.gated ?? '—'}</td>
        <td class="n">${s.duplicate ?? '—'}</td><td class="n">${s.too_late ?? '—'}</td>
        <td class="n">${num(s.mean_nis, 2)} (${s.nis_dof ?? '?'} dof; 95 %: ${num(s.nis_interval?.lower, 2)}–${num(s.nis_interval?.upper, 2)})</td>
        <td>${escapeHtml(VERDICT_WORDS[s.verdict] ?? s.verdict)}</td>
        <td class="n">${num(s.latency_ms?.p50, 0)} / ${num(s.latency_ms?.p95, 0)} / ${num(s.latency_ms?.p99, 0)} ms</td></tr>`).join('');
    const outages = (d.gnss_outages ?? []).map((o) => `${clock(o.from)} for ${duration(o.duration_s)}`).join('; ') || 'none';
    const resets = (d.track_resets ?? []).map((r) => clock(r.time)).join('; ') || 'none';
    this.set('#diagnostics-panel', `
      <table class="grid small"><thead><tr><th>sensor</th><th>accepted</th><th>gated</th><th>duplicate</th><th>too late</th>
        <th>mean NIS</th><th>verdict</th><th>delay p50 / p95 / p99</th></tr></thead><tbody>${rows}</tbody></table>
      <p class="small">GNSS outages: ${escapeHtml(outages)}. Track restarts: ${escapeHtml(resets)}.</p>`);
  }

  /** Whiteness of each sensor's innovations (diagnostics endpoint): verdict, lag-1 autocorrelation and its band. */
  renderWhiteness(result) {
    if (result.status !== 'fulfilled') {
      this.set('#whiteness-panel', `<p class="not-available">${escapeHtml(describeError(result.reason, 'Whiteness'))}</p>`);
      return;
    }
    const rows = (result.value.sensors ?? []).map((s) => {
      const w = s.whiteness;
      if (!w) {
        return `<tr data-sensor="${escapeHtml(s.sensor)}" data-whiteness="none"><td>${escapeHtml(SENSOR_WORDS[s.sensor] ?? s.sensor)}</td>
          <td colspan="3" class="muted">no innovations in the window</td></tr>`;
      }
      const parts = (w.components ?? []).map((c) => `${escapeHtml(c.component)} ${num(c.lag1, 2)} (± ${num(c.band, 2)}${
        Math.abs(c.lag1 ?? 0) > (c.band ?? Infinity) ? ', outside' : ''})`).join('; ');
      const tests = (w.components ?? []).map((c) => `${num(c.ljung_box_q, 1)} / ${num(c.critical_value, 1)}`).join('; ');
      const n = (w.components ?? []).map((c) => c.samples).join(' / ');
      return `<tr data-sensor="${escapeHtml(s.sensor)}" data-whiteness="${escapeHtml(w.verdict)}">
        <td>${escapeHtml(SENSOR_WORDS[s.sensor] ?? s.sensor)}</td>
        <td class="${w.verdict === 'correlated' ? 'whiteness-correlated' : ''}">${escapeHtml(WHITENESS_WORDS[w.verdict] ?? w.verdict)}</td>
        <td class="n">${parts}</td><td class="n">${tests} (${escapeHtml(String(n))} values)</td></tr>`;
    }).join('');
    this.set('#whiteness-panel', `
      <table class="grid small"><thead><tr><th>sensor</th><th>over time</th><th>lag-1 autocorrelation (95 % band)</th>
        <th>Ljung-Box Q / limit</th></tr></thead><tbody>${rows}</tbody></table>`);
  }

  renderCalibration() {
    const c = this.diagnostics?.calibration;
    const s = this.state;
    const source = c ? 'from the diagnostics of the window' : 'from the current estimate (diagnostics not available)';
    const wheel = c ? [c.wheel_scale, c.wheel_scale_sd] : [s?.wheel_scale, s?.wheel_scale_sd];
    const gyro = c ? [c.gyro_bias_dps, c.gyro_bias_sd_dps] : [s?.gyro_bias_dps, s?.gyro_bias_sd_dps];
    this.set('#calibration-panel', `
      <dl class="pairs">
        <dt>wheel-speed scale</dt><dd id="wheel-scale">${num(wheel[0], 4)} ± ${num(wheel[1], 4)}</dd>
        <dt>gyro bias</dt><dd id="gyro-bias">${num(gyro[0], 3)} ± ${num(gyro[1], 3)} °/s</dd>
      </dl><p class="muted small">Estimated online by the filter (± one standard deviation), ${source}.</p>`);
  }

  renderDistance(result) {
    if (result.status !== 'fulfilled') {
      this.set('#distance-panel', `<p class="not-available">${escapeHtml(describeError(result.reason, 'Distance'))}</p>`);
      return;
    }
    const d = result.value;
    this.set('#distance-panel', `
      <dl class="pairs">
        <dt>smoothed path</dt><dd id="distance-smoothed">${distance(d.smoothed_m, 3)} ± ${length(d.smoothed_sd_m, 1)}</dd>
        <dt>of which driven / carried (towed, ferried)</dt><dd id="distance-split">${distance(d.driven_m, 3)} / ${distance(d.carried_m, 3)}</dd>
        <dt>raw fixes joined up</dt><dd>${distance(d.raw_polyline_m, 3)}</dd>
        <dt>wheel-speed sum</dt><dd>${distance(d.wheel_m, 3)}</dd>
        <dt>time standing still</dt><dd>${duration(d.stationary_s)}</dd>
      </dl><p class="muted small">${escapeHtml(d.caution ?? '')}</p>`);
  }
}

/** One plain sentence above an explanation: where the van was, how sure, and what the measurements around it did. */
export function plainExplanation(e) {
  const s = e.state ?? {};
  const ms = e.measurements ?? [];
  const moving = Math.abs(s.speed_mps ?? 0) >= STANDING_BELOW_MPS;
  const motion = moving ? `moving at ${speed(Math.abs(s.speed_mps), 0)} towards the ${compassWords(s.heading_deg)}` : 'standing';
  const used = ms.filter((m) => m.decision === 'accepted').length;
  const gated = ms.filter((m) => m.decision === 'gated');
  const gatedWords = gated.length === 0 ? '' : `; ${gated.length} ${gated.length === 1 ? 'was' : 'were'} set aside as implausible (${
    [...new Set(gated.map((m) => SENSOR_WORDS[m.sensor] ?? m.sensor))].join(', ')})`;
  const biggest = ms.reduce((b, m) => (Number.isFinite(m.position_shift_m) && m.position_shift_m > (b?.position_shift_m ?? 0) ? m : b), null);
  const shift = biggest && biggest.position_shift_m >= 0.5
    ? ` The largest single correction, from ${SENSOR_WORDS[biggest.sensor] ?? biggest.sensor}, moved the position by ${length(biggest.position_shift_m, 1)}.`
    : '';
  return `At ${clock(s.time)} the van was ${motion}; its position is sure to within about ${length(s.ellipse95?.semi_major_m, 0)} `
    + `(95 % of the time). Of the ${ms.length} measurements within ${EXPLAIN_WINDOW_S / 2} s either side, ${used} were used${gatedWords}.${shift}`;
}
