// An SVG map in a local metric frame (east/north metres), with pan and zoom (d3-zoom), a scale bar and optional tiles.
import { d3 } from './d3.js';
import { roundLength } from './format.js';

const WEB_MERCATOR_M_PER_PX_Z0 = 156543.03392804097; // 2 pi a / 256 (tile side 256 px, equator)
const MAX_TILES = 48;

export class LocalMap {
  /**
   * @param {SVGSVGElement} svg the element to draw in
   * @param {(map: LocalMap) => void} draw redraws the layers with map.x / map.y
   */
  constructor(svg, draw) {
    this.svg = d3.select(svg);
    this.drawLayers = draw;
    this.frame = null;
    this.tileTemplate = null;
    this.transform = d3.zoomIdentity;
    this.svg.selectAll('*').remove();
    this.tiles = this.svg.append('g').attr('class', 'tiles');
    // The fleet's own base layer (roads driven, stops) lies under the vans and paths.
    this.base = this.svg.append('g').attr('class', 'base-layer');
    this.layers = this.svg.append('g').attr('class', 'layers');
    this.overlay = this.svg.append('g').attr('class', 'overlay');
    this.userMoved = false;
    this.zoom = d3.zoom().scaleExtent([0.02, 2000]).on('zoom', (event) => {
      // Only a person's wheel, drag or pinch carries a source event; fit() does not.
      if (event.sourceEvent) this.userMoved = true;
      this.transform = event.transform;
      this.render();
    });
    this.svg.call(this.zoom).on('dblclick.zoom', null);
    this.baseX = d3.scaleLinear();
    this.baseY = d3.scaleLinear();
    this.fitted = false;
    new ResizeObserver(() => this.render()).observe(svg);
  }

  /** Sets the frame (see localFrame.js) and the optional tile address with {z}/{x}/{y}. */
  setFrame(frame, tileTemplate) {
    this.frame = frame;
    this.tileTemplate = tileTemplate || null;
  }

  size() {
    const node = this.svg.node();
    return { width: node.clientWidth || 600, height: node.clientHeight || 400 };
  }

  /** Fits the view to points given as {eastM, northM}, with equal metres per pixel on both axes. */
  fit(points, minExtentM = 200) {
    this.userMoved = false;
    const { width, height } = this.size();
    const east = points.map((p) => p.eastM);
    const north = points.map((p) => p.northM);
    const [e0, e1] = east.length ? d3.extent(east) : [-minExtentM / 2, minExtentM / 2];
    const [n0, n1] = north.length ? d3.extent(north) : [-minExtentM / 2, minExtentM / 2];
    const spanE = Math.max(e1 - e0, minExtentM);
    const spanN = Math.max(n1 - n0, minExtentM);
    // Keep a margin free for the scale bar, the north mark and the labels.
    const marginPx = 56;
    const mPerPx = Math.max(spanE / Math.max(width - 2 * marginPx, 50), spanN / Math.max(height - 2 * marginPx, 50));
    const ce = (e0 + e1) / 2;
    const cn = (n0 + n1) / 2;
    this.baseX.domain([ce - (width / 2) * mPerPx, ce + (width / 2) * mPerPx]).range([0, width]);
    this.baseY.domain([cn - (height / 2) * mPerPx, cn + (height / 2) * mPerPx]).range([height, 0]);
    this.fitted = true;
    this.svg.call(this.zoom.transform, d3.zoomIdentity);
    this.render();
  }

  /** Pixels per metre at the current zoom. */
  pxPerM() {
    const [d0, d1] = this.baseX.domain();
    const [r0, r1] = this.baseX.range();
    return ((r1 - r0) / (d1 - d0)) * this.transform.k;
  }

  /** Sets the drawer of the base layer: (map) => void, drawing into map.base. */
  setBaseDrawer(draw) {
    this.drawBase = draw;
  }

  render() {
    if (!this.fitted) return;
    this.x = this.transform.rescaleX(this.baseX);
    this.y = this.transform.rescaleY(this.baseY);
    this.renderTiles();
    if (this.drawBase) this.drawBase(this);
    this.drawLayers(this);
    this.renderScaleBar();
  }

  renderScaleBar() {
    const { height } = this.size();
    const round = roundLength(140 / this.pxPerM());
    const lengthM = round.m;
    const px = lengthM * this.pxPerM();
    this.overlay.selectAll('*').remove();
    // Scale: a bar of four alternating ink and paper segments with its length at the ends ("0" and the length).
    const bar = this.overlay.append('g').attr('class', 'scale-bar').attr('data-length-px', px)
      .attr('transform', `translate(16,${height - 26})`);
    const segments = 4;
    for (let i = 0; i < segments; i++) {
      bar.append('rect').attr('x', (i * px) / segments).attr('y', 0).attr('width', px / segments).attr('height', 5)
        .attr('class', i % 2 === 0 ? 'scale-bar-ink' : 'scale-bar-paper');
    }
    bar.append('text').attr('x', 0).attr('y', 17).attr('text-anchor', 'start').attr('class', 'scale-bar-end').text('0');
    bar.append('text').attr('x', px).attr('y', 17).attr('text-anchor', 'end').attr('class', 'scale-bar-label')
      .attr('data-length-m', lengthM).text(round.text);
    // North: a plain needle with the letter above it.
    const north = this.overlay.append('g').attr('class', 'north-mark').attr('transform', `translate(${this.size().width - 20},${height - 30})`);
    north.append('line').attr('x1', 0).attr('y1', 12).attr('x2', 0).attr('y2', 0).attr('class', 'north-needle-tail');
    north.append('line').attr('x1', 0).attr('y1', 0).attr('x2', 0).attr('y2', -10).attr('class', 'north-needle');
    north.append('text').attr('y', -14).attr('text-anchor', 'middle').text('N');
  }

  renderTiles() {
    if (!this.tileTemplate || !this.frame) {
      this.tiles.selectAll('image').remove();
      return;
    }
    const { width, height } = this.size();
    const mPerPx = 1 / this.pxPerM();
    const lat0 = this.frame.lat0Deg * (Math.PI / 180);
    const z = Math.max(0, Math.min(19, Math.round(Math.log2((WEB_MERCATOR_M_PER_PX_Z0 * Math.cos(lat0)) / mPerPx))));
    const nw = this.frame.toGeodetic(this.x.invert(0), this.y.invert(0));
    const se = this.frame.toGeodetic(this.x.invert(width), this.y.invert(height));
    const n = 2 ** z;
    const tx = (lon) => ((lon + 180) / 360) * n;
    const ty = (lat) => {
      const phi = lat * (Math.PI / 180);
      return ((1 - Math.log(Math.tan(phi) + 1 / Math.cos(phi)) / Math.PI) / 2) * n;
    };
    const lonOf = (x) => (x / n) * 360 - 180;
    const latOf = (y) => Math.atan(Math.sinh(Math.PI * (1 - (2 * y) / n))) * (180 / Math.PI);
    const tiles = [];
    for (let x = Math.floor(tx(nw.lonDeg)); x <= Math.floor(tx(se.lonDeg)); x++) {
      for (let y = Math.floor(ty(nw.latDeg)); y <= Math.floor(ty(se.latDeg)); y++) {
        if (y < 0 || y >= n || tiles.length >= MAX_TILES) continue;
        const a = this.frame.toLocal(latOf(y), lonOf(x));
        const b = this.frame.toLocal(latOf(y + 1), lonOf(x + 1));
        tiles.push({
          key: `${z}/${x}/${y}`,
          href: this.tileTemplate.replace('{z}', z).replace('{x}', ((x % n) + n) % n).replace('{y}', y),
          x0: this.x(a.eastM), y0: this.y(a.northM), x1: this.x(b.eastM), y1: this.y(b.northM),
        });
      }
    }
    this.tiles.selectAll('image').data(tiles, (t) => t.key).join('image')
      .attr('href', (t) => t.href)
      .attr('preserveAspectRatio', 'none')
      .attr('x', (t) => t.x0).attr('y', (t) => t.y0)
      .attr('width', (t) => Math.max(0, t.x1 - t.x0) + 0.5).attr('height', (t) => Math.max(0, t.y1 - t.y0) + 0.5);
  }
}
