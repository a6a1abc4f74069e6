// Fleet view: every van's fused position and 95 % ellipse in the local metric frame, and a table of the vans.
import { getJson, describeError } from './api.js';
import { LocalMap } from './localMap.js';
import { centroid, createFrame, ellipseRotationSvgDeg } from './localFrame.js';
import { escapeHtml, num, speedKmh, utcTime } from './format.js';

export class FleetView {
  constructor(root, settings, onOpenVan) {
    this.root = root;
    this.settings = settings;
    this.onOpenVan = onOpenVan;
    this.vans = [];
    this.frame = null;
    this.map = new LocalMap(root.querySelector('#fleet-map'), (map) => this.draw(map));
    root.querySelector('#fleet-fit').addEventListener('click', () => this.fitAll());
  }

  /** The frame of the fleet (centroid of the first positions seen), shared with the vehicle view. */
  currentFrame() {
    return this.frame;
  }

  async refresh() {
    const status = this.root.querySelector('#fleet-status');
    try {
      const body = await getJson('/v1/vehicles');
      this.vans = body.vehicles ?? [];
      status.textContent = this.vans.length === 0
        ? 'No van has a position yet. Waiting for data…'
        : `${this.vans.length} vans. Newest estimate ${utcTime(this.vans.map((v) => v.time).sort().at(-1))}.`;
      if (!this.frame && this.vans.length > 0) {
        const c = centroid(this.vans);
        this.frame = createFrame(c.latDeg, c.lonDeg);
        this.map.setFrame(this.frame, this.settings.tile_url_template);
        this.root.querySelector('#fleet-frame').textContent =
          `Local east/north frame in metres around ${c.latDeg.toFixed(5)}°, ${c.lonDeg.toFixed(5)}° (the fleet's centroid at first sight).`;
        this.fitAll();
      } else if (!this.map.userMoved) {
        // Until someone pans or zooms, keep every van in view as vans appear and move.
        this.fitAll();
      } else {
        this.map.render();
      }
      this.renderTable();
    } catch (error) {
      status.textContent = describeError(error, 'Fleet');
      throw error;
    }
  }

  fitAll() {
    if (!this.frame) return;
    this.map.fit(this.vans.map((v) => this.frame.toLocal(v.lat_deg, v.lon_deg)));
  }

  draw(map) {
    if (!this.frame) return;
    const points = this.vans.map((v) => ({ ...v, ...this.frame.toLocal(v.lat_deg, v.lon_deg) }));
    const k = map.pxPerM();
    const groups = map.layers.selectAll('g.van').data(points, (d) => d.vehicle).join((enter) => {
      const g = enter.append('g').attr('class', 'van').attr('data-vehicle', (d) => d.vehicle)
        .on('click', (event, d) => this.onOpenVan(d.vehicle));
      // A heading tick and a small dot, so that even a few-pixel ellipse stays visible around the position.
      g.append('path').attr('class', 'van-heading').attr('d', 'M0,0 V-14');
      g.append('ellipse').attr('class', 'van-ellipse');
      g.append('circle').attr('class', 'van-dot').attr('r', 2.2);
      g.append('text').attr('class', 'van-label').attr('x', 9).attr('y', -8);
      g.append('title');
      return g;
    });
    groups.attr('transform', (d) => `translate(${map.x(d.eastM)},${map.y(d.northM)})`);
    groups.select('ellipse')
      .attr('rx', (d) => d.ellipse95.semi_major_m * k)
      .attr('ry', (d) => d.ellipse95.semi_minor_m * k)
      .attr('transform', (d) => `rotate(${ellipseRotationSvgDeg(d.ellipse95.orientation_deg)})`)
      .attr('data-semi-major-m', (d) => d.ellipse95.semi_major_m);
    groups.select('path.van-heading').attr('transform', (d) => `rotate(${d.heading_deg})`);
    groups.select('text').text((d) => d.vehicle);
    groups.select('title').text((d) => `${d.vehicle}: 95 % ellipse ${num(d.ellipse95.semi_major_m, 1)} × ${num(d.ellipse95.semi_minor_m, 1)} m (click to open)`);
  }

  renderTable() {
    const rows = this.vans.map((v) => `
      <tr data-vehicle="${escapeHtml(v.vehicle)}">
        <td><a href="#/van/${encodeURIComponent(v.vehicle)}">${escapeHtml(v.vehicle)}</a></td>
        <td>${utcTime(v.time)}</td>
        <td class="n">${speedKmh(v.speed_mps)}</td>
        <td class="n">${num(v.heading_deg, 0, '°')}</td>
        <td class="n">${num(v.ellipse95.semi_major_m, 1)} × ${num(v.ellipse95.semi_minor_m, 1)} m</td>
      </tr>`).join('');
    // Replace the rows only when they changed, so a link under the pointer is not swapped out every poll.
    const body = this.root.querySelector('#van-table tbody');
    if (this.lastRows !== rows) {
      body.innerHTML = rows;
      this.lastRows = rows;
    }
  }
}
