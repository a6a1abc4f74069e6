// Places map labels so that none overlaps another: a few spots around each point first, then, where a crowd leaves none
// (the vans standing together at their base), a stack beside the crowd joined to its point by a thin leader line.

const CHAR_WIDTH_PX = 6.4; // 11 px sans-serif, an estimate on the wide side
const LABEL_HEIGHT_PX = 13;

/** Width of a label's box in pixels for its text (estimate). */
export function labelWidthPx(text) {
  return String(text).length * CHAR_WIDTH_PX + 4;
}

function overlaps(a, b) {
  return a.x < b.x + b.w && b.x < a.x + a.w && a.y < b.y + b.h && b.y < a.y + a.h;
}

/**
 * Places labels. Items: { id, x, y, text } with (x, y) the point in pixels. Points are obstacles too (a 6 px square).
 * Returns one placement per item, in order: { id, x, y, w, h, leader } where (x, y) is the top-left of the label's box
 * and leader tells whether a line joins it to its point. With dropWhenCrowded, an item that finds no spot near its
 * point is left out (returned with dropped: true) instead of stacked.
 * @param {{id: string, x: number, y: number, text: string}[]} items
 * With bounds ({width, height} in pixels), labels stay inside that box where they can.
 * @param {{taken?: {x:number,y:number,w:number,h:number}[], dropWhenCrowded?: boolean, bounds?: {width:number,height:number}}} options
 */
export function placeLabels(items, options = {}) {
  const taken = [...(options.taken ?? [])];
  for (const item of items) taken.push({ x: item.x - 3, y: item.y - 3, w: 6, h: 6 });
  const bounds = options.bounds;
  const inside = (box) => !bounds || (box.x >= 0 && box.y >= 0 && box.x + box.w <= bounds.width && box.y + box.h <= bounds.height);
  const free = (box) => inside(box) && !taken.some((t) => overlaps(box, t));
  const out = [];
  // Top to bottom, then left to right: the same order every redraw, so labels do not hop about.
  const order = items.map((item, i) => ({ item, i })).sort((a, b) => a.item.y - b.item.y || a.item.x - b.item.x || a.i - b.i);
  const placed = new Array(items.length);
  for (const { item, i } of order) {
    const w = labelWidthPx(item.text);
    const h = LABEL_HEIGHT_PX;
    const spots = [
      [7, -h - 3], [7, 3], [-w - 7, -h - 3], [-w - 7, 3], [-w / 2, -h - 8], [-w / 2, 8], [9, -h / 2], [-w - 9, -h / 2],
    ];
    let box = null;
    for (const [dx, dy] of spots) {
      const candidate = { x: item.x + dx, y: item.y + dy, w, h };
      if (free(candidate)) {
        box = { ...candidate, leader: false };
        break;
      }
    }
    if (!box && options.dropWhenCrowded) {
      placed[i] = { id: item.id, dropped: true };
      continue;
    }
    if (!box) {
      // A stack to the right of the crowd: step away from the point, downwards then upwards, until a spot is free.
      for (let k = 0; k < 400 && !box; k++) {
        const step = Math.ceil(k / 2) * (h + 2) * (k % 2 === 0 ? 1 : -1);
        for (const dx of [26, 26 + 60, 26 + 120]) {
          const candidate = { x: item.x + dx, y: item.y - h / 2 + step, w, h };
          if (free(candidate)) {
            box = { ...candidate, leader: true };
            break;
          }
        }
      }
    }
    if (!box) box = { x: item.x + 7, y: item.y - h - 3, w, h, leader: false }; // nowhere free: overlap rather than hide
    taken.push(box);
    placed[i] = { id: item.id, ...box };
  }
  for (const p of placed) out.push(p);
  return out;
}
