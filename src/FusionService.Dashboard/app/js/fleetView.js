// Fleet view: every van's fused position and 95 % ellipse in the local metric frame over the fleet's own base layer, and
// a table saying at a glance how fresh each estimate is, whether the van moves, stands or has gone quiet, and its alerts.
import { d3 } from './d3.js';
import { describeError, getJson, query } from './api.js';
import { LocalMap } from './localMap.js';
import { centroid, createFrame, ellipseRotationSvgDeg } from './localFrame.js';
import { placeLabels } from './labelPlacement.js';
import { age, axes, clock, duration, escapeHtml, num, speed } from './format.js';

/** Below this speed a van counts as standing (a choice of ours: a slow walk is about 1.4 m/s). */
export const STANDING_BELOW_MPS = 0.5;

/** Smallest drawn size of a van's ellipse outline, pixels: a ring this big marks an ellipse too small to see. */
export const ELLIPSE_FLOOR_PX = 6;

const STATE_WORDS = { moving: 'moving', stopped: 'standing', silent: 'silent' };
const SEVERITY_RANK = { critical: 3, warning: 2, info: 1 };

/**
 * The van's condition: silent as the service's status says (nothing received for longer than its one silence limit,
 * judged on the server's clock), else moving or standing by its speed. Only a service that gives no status leaves the
 * page to judge silence itself, by the same limit (from settings.json), the estimate's time and when this page last
 * saw the van's data advance.
 */
export function vanCondition(van, seen, nowMs, silentAfterS) {
  const estimateMs = Date.parse(van.time);
  const receivedMs = van.last_received_at ? Date.parse(van.last_received_at) : NaN;
  const newestMs = Number.isFinite(receivedMs) ? Math.max(receivedMs, estimateMs) : estimateMs;
  let quietS = (nowMs - newestMs) / 1000;
  if (seen?.advancedAtMs !== undefined) quietS = Math.min(quietS, (nowMs - seen.advancedAtMs) / 1000);
  const silent = typeof van.status === 'string' ? van.status === 'silent' : quietS > silentAfterS;
  if (silent) return { state: 'silent', quietS };
  return { state: Math.abs(van.speed_mps) >= STANDING_BELOW_MPS ? 'moving' : 'stopped', quietS };
}

const SENSOR_LABELS = [['gnss', 'GNSS'], ['wheel', 'wheel'], ['imu', 'IMU']];

/** When each sensor of the van was last heard, as a small line under the estimate's age (empty if the API gives none). */
function sensorAges(van, nowMs) {
  const heard = van.last_received_by_sensor;
  if (!heard) return '';
  const parts = SENSOR_LABELS.filter(([key]) => heard[key]).map(([key, label]) => `${label} ${age(heard[key], nowMs)}`);
  return parts.length ? `<div class="muted small sensor-ages">heard: ${escapeHtml(parts.join(' · '))}</div>` : '';
}

export class FleetView {
  constructor(root, settings, onOpenVan, baseLayer) {
    this.root = root;
    this.settings = settings;
    this.onOpenVan = onOpenVan;
    this.baseLayer = baseLayer;
    this.vans = [];
    /** The service's silence limit, seconds: from each list answer, else from settings.json. */
    this.silentAfterS = Number.isFinite(settings.silent_after_s) ? settings.silent_after_s : 120;
    /** The fleet's vehicle_silent alert threshold, seconds (GET /v1/alert-rules), once known. */
    this.alertAfterS = null;
    this.seen = new Map();
    this.openAlerts = new Map();
    this.frame = null;
    this.map = new LocalMap(root.querySelector('#fleet-map'), (map) => this.draw(map));
    root.querySelector('#fleet-fit').addEventListener('click', () => this.fitAll());
    root.querySelector('#van-table tbody').addEventListener('click', (event) => {
      const row = event.target.closest('tr[data-vehicle]');
      if (row && !event.target.closest('a')) this.onOpenVan(row.dataset.vehicle);
    });
  }

  /** The frame of the fleet (centroid of the first positions seen), shared with the vehicle view. */
  currentFrame() {
    return this.frame;
  }

  /** Open alerts by van, from the alerts pane: Map vehicle -> alerts. */
  setOpenAlerts(byVehicle) {
    this.openAlerts = byVehicle;
    if (this.frame) this.render();
  }

  async refresh() {
    const status = this.root.querySelector('#fleet-status');
    try {
      // Every page (a service that pages the list gives next_after; one without answers all at once).
      const vans = [];
      let after = null;
      for (let pages = 0; pages < 100; pages++) {
        const body = await getJson(`/v1/vehicles${query({ limit: 1000, after })}`);
        vans.push(...(body.vehicles ?? []));
        if (Number.isFinite(body.silent_after_s)) this.silentAfterS = body.silent_after_s;
        after = body.next_after ?? null;
        if (!after) break;
      }
      this.vans = vans;
      if (this.alertAfterS === null) this.loadAlertThreshold();
      const now = Date.now();
      for (const v of this.vans) {
        const before = this.seen.get(v.vehicle);
        const key = `${v.time}|${v.last_received_at ?? ''}`;
        if (!before) this.seen.set(v.vehicle, { key });
        else if (before.key !== key) this.seen.set(v.vehicle, { key, advancedAtMs: now });
      }
      if (!this.frame && this.vans.length > 0) {
        const c = centroid(this.vans);
        this.frame = createFrame(c.latDeg, c.lonDeg);
        this.map.setFrame(this.frame, this.settings.tile_url_template);
        this.baseLayer?.attach(this.map, this.frame);
        this.root.querySelector('#fleet-frame').textContent =
          `Local east/north frame around ${c.latDeg.toFixed(5)}°, ${c.lonDeg.toFixed(5)}° (the fleet's centroid at first sight).`;
        this.fitAll();
      } else if (this.frame && !this.map.userMoved) {
        // Until someone pans or zooms, keep every van in view as vans appear and move.
        this.fitAll();
      } else {
        this.render();
      }
    } catch (error) {
      status.textContent = describeError(error, 'Fleet');
      throw error;
    }
  }

  /** Redraws the map and the table (after new data, a new preference or new alerts). */
  render() {
    this.map.render();
    this.renderTable();
  }

  fitAll() {
    if (!this.frame) return;
    this.map.fit(this.vans.map((v) => this.frame.toLocal(v.lat_deg, v.lon_deg)));
    this.renderTable();
  }

  conditions() {
    const now = Date.now();
    return new Map(this.vans.map((v) => [v.vehicle, vanCondition(v, this.seen.get(v.vehicle), now, this.silentAfterS)]));
  }

  /** Reads once when the fleet's vehicle_silent alert opens, to say it beside the silence limit (no words when unknown). */
  async loadAlertThreshold() {
    this.alertAfterS = undefined;
    try {
      const rules = await getJson('/v1/alert-rules');
      const rule = rules?.vehicle_silent;
      this.alertAfterS = rule && rule.enabled !== false && Number.isFinite(rule.silent_s) ? rule.silent_s : undefined;
    } catch {
      // Not available to this key or this service: the status line leaves the alert out.
    }
  }

  draw(map) {
    if (!this.frame) return;
    const conditions = this.conditions();
    const points = this.vans.map((v) => ({ ...v, ...this.frame.toLocal(v.lat_deg, v.lon_deg), condition: conditions.get(v.vehicle) }));
    const k = map.pxPerM();
    const groups = map.layers.selectAll('g.van').data(points, (d) => d.vehicle).join((enter) => {
      const g = enter.append('g').attr('class', 'van').attr('data-vehicle', (d) => d.vehicle)
        .on('click', (event, d) => this.onOpenVan(d.vehicle));
      g.append('circle').attr('class', 'van-floor').attr('r', ELLIPSE_FLOOR_PX);
      g.append('ellipse').attr('class', 'van-ellipse');
      g.append('path').attr('class', 'van-heading').attr('d', 'M0,0 V-14');
      g.append('circle').attr('class', 'van-dot').attr('r', 3);
      g.append('title');
      return g;
    });
    groups.attr('transform', (d) => `translate(${map.x(d.eastM)},${map.y(d.northM)})`)
      .attr('data-state', (d) => d.condition.state)
      .attr('class', (d) => `van van-${d.condition.state}`);
    // The ellipse to scale; when it is smaller than the floor ring, the ring shows where it is.
    groups.select('ellipse')
      .attr('rx', (d) => d.ellipse95.semi_major_m * k)
      .attr('ry', (d) => d.ellipse95.semi_minor_m * k)
      .attr('transform', (d) => `rotate(${ellipseRotationSvgDeg(d.ellipse95.orientation_deg)})`)
      .attr('data-semi-major-m', (d) => d.ellipse95.semi_major_m);
    groups.select('circle.van-floor')
      .attr('data-shown', (d) => String(d.ellipse95.semi_major_m * k < ELLIPSE_FLOOR_PX))
      .style('display', (d) => (d.ellipse95.semi_major_m * k < ELLIPSE_FLOOR_PX ? null : 'none'));
    // A heading only for a van that moves: a standing van's heading says nothing.
    groups.select('path.van-heading')
      .style('display', (d) => (d.condition.state === 'moving' ? null : 'none'))
      .attr('transform', (d) => `rotate(${d.heading_deg})`);
    groups.select('title').text((d) => `${d.vehicle}: ${STATE_WORDS[d.condition.state]}, estimate from ${age(d.time)}; `
      + `95 % ellipse ${axes(d.ellipse95.semi_major_m, d.ellipse95.semi_minor_m)}`
      + `${d.ellipse95.semi_major_m * k < ELLIPSE_FLOOR_PX ? ' (smaller than the ring at this zoom)' : ''} — click to open`);

    // Labels last, placed so that none overlaps another or a van.
    const placements = placeLabels(points.map((d) => ({ id: d.vehicle, x: map.x(d.eastM), y: map.y(d.northM), text: d.vehicle })),
      { bounds: map.size() });
    const byId = new Map(points.map((d) => [d.vehicle, d]));
    const labels = map.layers.selectAll('g.van-labels').data([0]).join('g').attr('class', 'van-labels').raise();
    const label = labels.selectAll('g.van-label-box').data(placements, (p) => p.id).join((enter) => {
      const g = enter.append('g').attr('class', 'van-label-box').attr('data-vehicle', (p) => p.id)
        .on('click', (event, p) => this.onOpenVan(p.id));
      g.append('line').attr('class', 'van-leader');
      g.append('text').attr('class', 'van-label');
      return g;
    });
    label.attr('data-leader', (p) => String(p.leader))
      .attr('data-box', (p) => [p.x, p.y, p.w, p.h].map((n) => n.toFixed(1)).join(' '));
    label.select('text').attr('x', (p) => p.x + 2).attr('y', (p) => p.y + 10).text((p) => p.id);
    label.select('line')
      .style('display', (p) => (p.leader ? null : 'none'))
      .attr('x1', (p) => map.x(byId.get(p.id).eastM)).attr('y1', (p) => map.y(byId.get(p.id).northM))
      .attr('x2', (p) => p.x).attr('y2', (p) => p.y + 6.5);
    this.baseLayer?.placeStopLabels(map, placements);
  }

  renderTable() {
    const conditions = this.conditions();
    const status = this.root.querySelector('#fleet-status');
    const counts = { moving: 0, stopped: 0, silent: 0 };
    for (const c of conditions.values()) counts[c.state] += 1;
    const newest = this.vans.map((v) => v.time).sort().at(-1);
    status.textContent = this.vans.length === 0
      ? 'No van has a position yet. Waiting for data…'
      : `${this.vans.length} vans: ${counts.moving} moving, ${counts.stopped} standing, ${counts.silent} silent `
        + `(nothing received for more than ${duration(this.silentAfterS)}${Number.isFinite(this.alertAfterS)
          ? `; the fleet's alert after ${duration(this.alertAfterS)}` : ''}). Newest estimate ${clock(newest)}, ${age(newest)}.`;
    status.dataset.silentAfterS = String(this.silentAfterS);
    const body = d3.select(this.root.querySelector('#van-table tbody'));
    const rows = body.selectAll('tr').data(this.vans, (v) => v.vehicle).join((enter) => {
      const tr = enter.append('tr').attr('data-vehicle', (v) => v.vehicle);
      tr.append('td').append('a').attr('href', (v) => `#/van/${encodeURIComponent(v.vehicle)}`).text((v) => v.vehicle);
      for (const name of ['state', 'age', 'speed', 'heading', 'ellipse', 'alerts']) tr.append('td').attr('class', `col-${name}`);
      return tr;
    });
    rows.order();
    const now = Date.now();
    rows.each(function (v) {
      const c = conditions.get(v.vehicle);
      const tr = d3.select(this);
      tr.attr('data-state', c.state).attr('data-age-s', Math.round((now - Date.parse(v.time)) / 1000));
      tr.select('td.col-state').html(`<span class="badge badge-${c.state}">${STATE_WORDS[c.state]}</span>`);
      tr.select('td.col-age').attr('title', `estimate at ${clock(v.time)}`)
        .html(`${escapeHtml(age(v.time, now))} <span class="muted small">${escapeHtml(clock(v.time))}</span>${sensorAges(v, now)}`);
      tr.select('td.col-speed').attr('class', 'col-speed n').text(speed(v.speed_mps));
      tr.select('td.col-heading').attr('class', 'col-heading n')
        .attr('title', c.state === 'moving' ? null : 'not shown for a van that stands or is silent: it says nothing then')
        .text(c.state === 'moving' ? num(v.heading_deg, 0, '°') : '—');
      tr.select('td.col-ellipse').attr('class', 'col-ellipse n').text(axes(v.ellipse95.semi_major_m, v.ellipse95.semi_minor_m));
    });
    const openAlerts = this.openAlerts;
    rows.each(function (v) {
      const list = openAlerts.get(v.vehicle) ?? [];
      const tr = d3.select(this).attr('data-open-alerts', list.length);
      const worst = list.reduce((w, a) => ((SEVERITY_RANK[a.severity] ?? 0) > (SEVERITY_RANK[w] ?? 0) ? a.severity : w), null);
      const carried = list.some((a) => a.kind === 'moved_without_driving');
      tr.select('td.col-alerts').html(list.length === 0 ? '<span class="muted small">none open</span>'
        : `<span class="badge badge-alert severity-${escapeHtml(worst)}" title="open alerts, the worst ${escapeHtml(worst)}">${list.length} open</span>`
          + (carried ? ' <span class="badge badge-carried" title="GNSS moves while the wheels stand: towed, ferried or lifted?">carried?</span>' : ''));
    });
  }
}
