// Vehicle view: raw fixes (gated ones marked apart), filtered and smoothed paths, a time scrubber, the explanation of a
// point, NIS strip charts per sensor, calibration estimates and the distance summary.
import { d3 } from './d3.js';
import { describeError, getJson, query } from './api.js';
import { LocalMap } from './localMap.js';
import { centroid, createFrame, ellipseRotationSvgDeg } from './localFrame.js';
import { drawNisChart } from './nisChart.js';
import { escapeHtml, num, SENSOR_WORDS, utcDateTime, utcTime, utcTimeTenths, VERDICT_WORDS, WHITENESS_WORDS } from './format.js';

const EXPLAIN_WINDOW_S = 10;
const NIS_WINDOW_S = 120;

export class VehicleView {
  constructor(root, settings, fleetFrame) {
    this.root = root;
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
    root.querySelector('#vehicle-window').addEventListener('change', () => this.load());
    root.querySelector('#vehicle-refresh').addEventListener('click', () => this.load());
    root.querySelector('#vehicle-fit').addEventListener('click', () => this.fit());
    this.explainTimer = null;
  }

  async open(vehicle) {
    if (this.vehicle !== vehicle) {
      this.vehicle = vehicle;
      this.frame = null;
      this.selectedMs = null;
      this.window = null;
    }
    this.root.querySelector('#vehicle-name').textContent = vehicle;
    await this.load();
  }

  set(id, html) {
    this.root.querySelector(id).innerHTML = html;
  }

  async load() {
    const vehicle = this.vehicle;
    const v = encodeURIComponent(vehicle);
    const minutes = Number(this.root.querySelector('#vehicle-window').value);
    this.set('#vehicle-status', 'Loading…');
    let state;
    try {
      state = await getJson(`/v1/vehicles/${v}/state`);
    } catch (error) {
      this.set('#vehicle-status', escapeHtml(describeError(error, 'State')));
      return;
    }
    const toMs = Date.parse(state.time);
    const fromMs = toMs - minutes * 60_000;
    // A selection at the newest time follows the newest time on refresh.
    if (this.window && this.selectedMs === this.window.toMs) this.selectedMs = toMs;
    this.window = { fromMs, toMs };
    const range = { from: new Date(fromMs).toISOString(), to: new Date(toMs).toISOString() };
    this.scrubber.min = String(fromMs);
    this.scrubber.max = String(toMs);
    this.scrubber.step = '100';
    if (this.selectedMs === null || this.selectedMs < fromMs || this.selectedMs > toMs) this.selectedMs = toMs;
    this.scrubber.value = String(this.selectedMs);
    this.set('#vehicle-status', `Window ${utcDateTime(range.from)} to ${utcTime(range.to)}; newest estimate ${utcTime(state.time)}.`);

    const step = minutes > 30 ? 1 : null;
    const track = (kind, s) => getJson(`/v1/vehicles/${v}/track${query({ ...range, kind, step: s, format: 'json' })}`);
    const [raw, filtered, smoothed, diagnostics, distance] = await Promise.allSettled([
      track('raw', null), track('filtered', step), track('smoothed', step),
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
    }
    for (const kind of ['raw', 'filtered', 'smoothed']) {
      for (const p of this.tracks[kind]) {
        Object.assign(p, this.frame.toLocal(p.lat_deg, p.lon_deg));
        p.timeMs = Date.parse(p.time);
      }
    }
    this.set('#track-notes', notes.map((n) => `<p class="not-available">${escapeHtml(n)}</p>`).join(''));
    this.renderLegendCounts();
    this.fit();

    this.diagnostics = diagnostics.status === 'fulfilled' ? diagnostics.value : null;
    this.renderDiagnostics(diagnostics);
    this.renderWhiteness(diagnostics);
    this.renderCalibration();
    this.renderDistance(distance);
    this.renderGnssNis();
    this.select(this.selectedMs, true);
  }

  fit() {
    const all = [...this.tracks.smoothed, ...this.tracks.filtered, ...this.tracks.raw.filter((p) => p.outcome !== 'gated')];
    if (all.length === 0 && this.state) all.push(this.frame.toLocal(this.state.lat_deg, this.state.lon_deg));
    this.map.fit(all, 100);
  }

  renderLegendCounts() {
    const gated = this.tracks.raw.filter((p) => p.outcome === 'gated').length;
    this.set('#legend-counts', `${this.tracks.raw.length} raw fixes (${gated} gated), ${this.tracks.filtered.length} filtered and `
      + `${this.tracks.smoothed.length} smoothed points in the window.`);
  }

  /** Moves the scrubber to timeMs; with explain, loads the explanation panel for that time. */
  select(timeMs, explain) {
    if (!Number.isFinite(timeMs)) return;
    this.selectedMs = timeMs;
    this.scrubber.value = String(timeMs);
    this.root.querySelector('#scrubber-time').textContent = utcDateTime(new Date(timeMs).toISOString());
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
      .selectAll('title').data((p) => [p]).join('title').text((p) => `${utcTime(p.time)} ${p.outcome}, NIS ${num(p.nis, 2)}`);
    fixes.selectAll('path.fix-gated').data(raw.filter((p) => p.outcome === 'gated'), (p) => p.time).join('path')
      .attr('class', 'fix fix-gated').attr('d', 'M-5,-5 L5,5 M-5,5 L5,-5')
      .attr('transform', (p) => `translate(${map.x(p.eastM)},${map.y(p.northM)})`)
      .on('click', (event, p) => this.select(p.timeMs, true))
      .selectAll('title').data((p) => [p]).join('title').text((p) => `${utcTime(p.time)} gated, NIS ${num(p.nis, 1)}`);

    const paths = [['filtered', 'filtered-path'], ['smoothed', 'smoothed-path']];
    for (const [kind, id] of paths) {
      const pts = this.tracks[kind];
      layers.selectAll(`path#${id}`).data([pts]).join('path').attr('id', id).attr('class', `track ${id}`)
        .attr('data-points', pts.length).attr('d', pts.length > 1 ? this.line(pts) : null);
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
    this.set(panel, `<p class="muted">Loading the explanation for ${utcDateTime(time)}…</p>`);
    let explained;
    try {
      explained = await getJson(`/v1/vehicles/${v}/explain${query({ time, window_s: EXPLAIN_WINDOW_S })}`);
    } catch (error) {
      this.set(panel, `<p class="not-available">${escapeHtml(describeError(error, 'Explanation'))}</p>`);
    }
    if (explained) this.renderExplanation(explained);
    await this.renderOtherNis(timeMs);
  }

  renderExplanation(e) {
    const s = e.state ?? {};
    const rows = (e.measurements ?? []).map((m) => `
      <tr class="decision-${escapeHtml(m.decision)}">
        <td>${utcTimeTenths(m.time)}</td><td>${escapeHtml(SENSOR_WORDS[m.sensor] ?? m.sensor)}</td>
        <td>${escapeHtml(Object.entries(m.values ?? {}).map(([k, val]) => `${k} ${typeof val === 'number' ? val.toFixed(k.endsWith('_deg') ? 6 : 2) : val}`).join(', '))}</td>
        <td class="n">${escapeHtml((m.residual ?? []).map((r) => r.toFixed(2)).join(', '))}</td>
        <td class="n">${num(m.nis, 2)}${m.nis_dof ? ` / ${m.nis_dof}` : ''}</td>
        <td class="n">${num(m.gate_threshold, 2)}</td>
        <td>${escapeHtml(m.decision)}</td>
        <td class="n">${num(m.position_shift_m, 2, 'm')}</td>
      </tr>`).join('');
    this.set('#explain-panel', `
      <p>Estimate at ${utcDateTime(s.time)}: ${num(s.lat_deg, 6)}°, ${num(s.lon_deg, 6)}°, heading ${num(s.heading_deg, 0, '°')},
         ${num(s.speed_mps, 1, 'm/s')}, 95 % ellipse ${num(s.ellipse95?.semi_major_m, 1)} × ${num(s.ellipse95?.semi_minor_m, 1)} m.</p>
      <div class="scroll"><table class="grid small"><thead><tr><th>time</th><th>sensor</th><th>values</th><th>residual</th><th>NIS / dof</th>
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
    const outages = (d.gnss_outages ?? []).map((o) => `${utcTime(o.from)} for ${num(o.duration_s, 0, 's')}`).join('; ') || 'none';
    const resets = (d.track_resets ?? []).map((r) => utcTime(r.time)).join('; ') || 'none';
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
        <dt>smoothed path</dt><dd id="distance-smoothed">${num(d.smoothed_m / 1000, 3, 'km')} ± ${num(d.smoothed_sd_m, 1, 'm')}</dd>
        <dt>of which driven / carried (towed, ferried)</dt><dd id="distance-split">${num(d.driven_m / 1000, 3, 'km')} / ${num(d.carried_m / 1000, 3, 'km')}</dd>
        <dt>raw fixes joined up</dt><dd>${num(d.raw_polyline_m / 1000, 3, 'km')}</dd>
        <dt>wheel-speed sum</dt><dd>${num(d.wheel_m / 1000, 3, 'km')}</dd>
        <dt>time standing still</dt><dd>${num(d.stationary_s / 60, 1, 'min')}</dd>
      </dl><p class="muted small">${escapeHtml(d.caution ?? '')}</p>`);
  }
}
