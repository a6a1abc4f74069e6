// The fleet's own base layer, drawn under the vans with no tiles and no network beyond the service: the roads the fleet
// has driven (grid cells its confident, moving estimates fell in) and the places where vans stand (stops), from
// GET /v1/base-layer. Fetched again once a minute at most.
import { describeError, getJson, query } from './api.js';
import { placeLabels } from './labelPlacement.js';
import { duration, length } from './format.js';

const REFRESH_MS = 60_000;
const LABELLED_STOPS = 6;

export class BaseLayer {
  /** @param {HTMLElement | null} note element for a one-line account of the layer */
  constructor(note) {
    this.note = note;
    this.data = null;
    this.maps = new Set();
    this.loadedAtMs = 0;
    this.loading = null;
  }

  /** Draws the layer under map's vans in frame (see localFrame.js). */
  attach(map, frame) {
    map.setBaseDrawer((m) => this.draw(m, frame));
    this.maps.add(map);
    this.refresh();
  }

  /** Fetches the layer when it is older than a minute (or always with force). */
  async refresh(force = false) {
    if (this.loading) return this.loading;
    if (!force && Date.now() - this.loadedAtMs < REFRESH_MS) return undefined;
    this.loading = (async () => {
      try {
        const body = await getJson(`/v1/base-layer${query({ days: 7 })}`);
        const features = body.features ?? [];
        this.data = {
          cellM: body.cell_m ?? 10,
          days: body.days,
          roads: features.filter((f) => f.properties?.layer === 'road').map((f) => ({
            lon: f.geometry.coordinates[0], lat: f.geometry.coordinates[1], ...f.properties,
          })),
          stops: features.filter((f) => f.properties?.layer === 'stop').map((f) => ({
            lon: f.geometry.coordinates[0], lat: f.geometry.coordinates[1], ...f.properties,
          })).sort((a, b) => b.dwell_s - a.dwell_s),
        };
        this.loadedAtMs = Date.now();
        if (this.note) {
          this.note.textContent = `Under the vans: ${this.data.roads.length} squares of ${length(this.data.cellM, 0)} the fleet drove through `
            + `and ${this.data.stops.length} places where vans stood, learned from the fleet's own estimates of the last ${this.data.days ?? 7} days (no map tiles needed).`;
          this.note.className = 'muted small';
        }
      } catch (error) {
        this.loadedAtMs = Date.now();
        if (this.note) {
          this.note.textContent = describeError(error, 'Base layer');
          this.note.className = 'not-available small';
        }
      } finally {
        this.loading = null;
      }
      for (const map of this.maps) map.render();
    })();
    return this.loading;
  }

  draw(map, frame) {
    const g = map.base;
    if (!this.data) {
      g.attr('data-cells', 0).attr('data-stops', 0);
      return;
    }
    const k = map.pxPerM();
    for (const list of [this.data.roads, this.data.stops]) {
      for (const p of list) {
        if (p.frame !== frame) Object.assign(p, frame.toLocal(p.lat, p.lon), { frame });
      }
    }
    g.attr('data-cells', this.data.roads.length).attr('data-stops', this.data.stops.length).attr('data-cell-m', this.data.cellM);
    const maxVehicles = Math.max(1, ...this.data.roads.map((r) => r.vehicles));
    // Each square a disc a little wider than the square, so neighbours merge into a road; at least 1.5 px across.
    const r = Math.max(0.75, 0.7 * this.data.cellM * k);
    g.selectAll('g.roads').data([0]).join('g').attr('class', 'roads')
      .selectAll('circle').data(this.data.roads).join('circle')
      .attr('class', 'road-cell')
      .attr('cx', (p) => map.x(p.eastM)).attr('cy', (p) => map.y(p.northM)).attr('r', r)
      .attr('fill-opacity', (p) => 0.35 + 0.45 * (p.vehicles / maxVehicles));
    const stops = g.selectAll('g.stops').data([0]).join('g').attr('class', 'stops')
      .selectAll('g.stop').data(this.data.stops, (s) => `${s.lat},${s.lon}`).join((enter) => {
        const s = enter.append('g').attr('class', 'stop');
        s.append('rect').attr('x', -3.5).attr('y', -3.5).attr('width', 7).attr('height', 7).attr('class', 'stop-mark');
        s.append('title');
        return s;
      });
    stops.attr('transform', (s) => `translate(${map.x(s.eastM)},${map.y(s.northM)})`)
      .attr('data-dwell-s', (s) => Math.round(s.dwell_s)).attr('data-vehicles', (s) => s.vehicles);
    stops.select('title').text((s) => stopWords(s));
  }

  /** Labels the longest stops where the vans' labels leave room (van labels come first; a crowded stop stays unlabelled). */
  placeStopLabels(map, vanPlacements) {
    const g = map.base;
    if (!this.data) return;
    const shown = this.data.stops.slice(0, LABELLED_STOPS).filter((s) => Number.isFinite(s.eastM));
    const taken = vanPlacements.filter((p) => !p.dropped).map((p) => ({ x: p.x, y: p.y, w: p.w, h: p.h }));
    const placements = placeLabels(shown.map((s) => ({ id: `${s.lat},${s.lon}`, x: map.x(s.eastM), y: map.y(s.northM), text: shortStopWords(s) })),
      { taken, dropWhenCrowded: true, bounds: map.size() });
    const byId = new Map(shown.map((s) => [`${s.lat},${s.lon}`, s]));
    g.selectAll('g.stop-labels').data([0]).join('g').attr('class', 'stop-labels')
      .selectAll('text').data(placements.filter((p) => !p.dropped), (p) => p.id).join('text')
      .attr('class', 'stop-label').attr('x', (p) => p.x + 2).attr('y', (p) => p.y + 10)
      .text((p) => shortStopWords(byId.get(p.id)));
  }
}

function shortStopWords(s) {
  return `stand ${duration(s.dwell_s)}, ${s.vehicles} ${s.vehicles === 1 ? 'van' : 'vans'}`;
}

function stopWords(s) {
  return `Vans stood here for ${duration(s.dwell_s)} in all (${s.vehicles} ${s.vehicles === 1 ? 'van' : 'different vans'}). `
    + 'The place where most vans stand is likely their base.';
}
