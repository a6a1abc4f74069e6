// Alerts pane: the fleet's open alerts asked from the server (state=open), the worst first, each with a plain line, the
// numbers behind a "details" toggle, who acknowledged it and when, and a link to the van's view at the alert's time.
import { describeError, getJson, NotAvailableError, postJson, query } from './api.js';
import { ALERT_KIND_WORDS, clock, dateTime, duration, escapeHtml, length, num, rawValue, SENSOR_WORDS, speed } from './format.js';

const SEVERITY_RANK = { critical: 3, warning: 2, info: 1 };
const SEVERITY_WORDS = { critical: 'act now', warning: 'look soon', info: 'for maintenance' };
/** Largest page the alerts API gives (limit 1-1000). */
const SERVER_LIMIT = 1000;
const ACKNOWLEDGED_SHOWN = 50;
/** Most open alerts fetched over several pages. */
const MAX_OPEN = 5000;

/** Every page of GET /v1/alerts for params (following next_cursor), up to max alerts. */
async function allPages(params, max) {
  const alerts = [];
  let cursor = null;
  let paged = false;
  do {
    const page = await getJson(`/v1/alerts${query({ ...params, cursor })}`);
    alerts.push(...(page.alerts ?? []));
    paged = paged || 'next_cursor' in page;
    cursor = page.next_cursor ?? null;
  } while (cursor && alerts.length < max);
  return { alerts, paged, more: Boolean(cursor) };
}
const PAGE = 20;

/** Worst first, then the newest start. */
export function alertOrder(a, b) {
  return (SEVERITY_RANK[b.severity] ?? 0) - (SEVERITY_RANK[a.severity] ?? 0)
    || (b.started_at ?? '').localeCompare(a.started_at ?? '');
}

/** One plain sentence for an operator, from the alert's kind and numbers. */
export function plainLine(a) {
  const d = a.details ?? {};
  const sensor = (name) => SENSOR_WORDS[name] ?? name;
  switch (a.kind) {
    case 'gated_burst':
      return `${d.count ?? a.count} GNSS positions in ${duration(d.span_s)} were too far from where the van should be and were set aside. `
        + 'Usually tall buildings or a poor antenna; the position may be less sure meanwhile.';
    case 'inconsistent_sensor': {
      const names = (d.sensors ?? []).map((s) => sensor(s.sensor)).join(', ') || 'a sensor';
      return `The ${names} readings disagree with the estimate more than they should for a while. `
        + 'The stated uncertainty may be too small until it settles.';
    }
    case 'gnss_silent_while_moving':
      return `No GNSS position for ${duration(d.silent_s)} while the van was moving at about ${speed(d.speed_mps)}: `
        + 'its position is carried forward from wheel and gyro and grows less sure.';
    case 'track_reset':
      return (d.resets ?? a.count) > 1
        ? `The position jumped and the service restarted the van's track ${d.resets ?? a.count} times (last jump ${length(d.position_shift_m, 0)}).`
        : `The position jumped by ${length(d.position_shift_m, 0)} and the service restarted the van's track there.`;
    case 'wheel_scale_out_of_band':
      return `The wheel-speed sensor reads ${num(Math.abs((d.wheel_scale ?? 1) - 1) * 100, 1)} % ${(d.wheel_scale ?? 1) > 1 ? 'high' : 'low'}: `
        + 'worth a look at the tyre size and pressure. The estimate corrects for it meanwhile.';
    case 'moved_without_driving':
      return `The van moved at about ${speed(d.speed_mps)} by GNSS while its wheels stood still: towed, on a ferry or lifted?`;
    case 'sensor_isolated':
      return `${(d.streams ?? []).map((s) => (s === 'imu' ? 'The gyro' : s === 'gnss_course' ? 'The GNSS course' : s)).join(' and ') || 'A sensor'} `
        + 'kept disagreeing with the others and is no longer used for this van until it agrees again.';
    case 'vehicle_silent':
      return `Nothing received from the van for ${duration(d.silent_s)}${d.last_received_at ? ` (last at ${clock(d.last_received_at)})` : ''}.`;
    default:
      return a.summary ?? ALERT_KIND_WORDS[a.kind] ?? a.kind;
  }
}

/** The details as rows [path, key, value]: path names nested entries ("sensors[1]."), key is the API's own name. */
function detailRows(value, prefix = '', key = '') {
  if (value === null || value === undefined) return [];
  if (typeof value !== 'object') return [[prefix, key, value]];
  if (Array.isArray(value)) {
    return value.flatMap((v, i) => (v !== null && typeof v === 'object'
      ? detailRows(v, `${prefix}${key}[${i + 1}].`, '')
      : detailRows(v, '', `${prefix}${key}[${i + 1}]`)));
  }
  const path = key ? `${prefix}${key}.` : prefix;
  return Object.entries(value).flatMap(([k, v]) => detailRows(v, path, k));
}

/**
 * One row of the details: the value converted to the reader's units (the API keeps SI). No full-precision value goes
 * into the markup: the list is redrawn only when its markup changes, and digits nobody sees would redraw it (and swap
 * the Acknowledge buttons) at every poll.
 */
function detailRow([path, key, value]) {
  const shown = rawValue(key, value);
  return `<tr data-key="${escapeHtml(path + key)}"><th>${escapeHtml(path + shown.name)}</th><td>${escapeHtml(shown.text)}</td></tr>`;
}

/** Where the van's view should open for an alert: a window around it and the time to select. */
export function alertLink(a) {
  const startMs = Date.parse(a.started_at);
  const endMs = a.ended_at ? Date.parse(a.ended_at) : startMs;
  const from = new Date(startMs - 5 * 60_000).toISOString();
  const to = new Date(Math.max(endMs, startMs) + 5 * 60_000).toISOString();
  return `#/van/${encodeURIComponent(a.vehicle)}${query({ from, to, at: a.started_at })}`;
}

export class AlertsList {
  /** @param {(byVehicle: Map<string, object[]>) => void} onOpenAlerts told the open alerts by van after each refresh */
  constructor(root, onOpenAlerts) {
    this.root = root;
    this.onOpenAlerts = onOpenAlerts;
    this.alerts = [];
    this.available = true;
    this.vehicleFilter = null;
    this.shownCount = PAGE;
    this.openDetails = new Set();
    this.truncated = false;
    // Alerts acknowledged from this page: id -> { alert, atMs }. A list asked for before the acknowledgement must not
    // show such an alert open again.
    this.localAcks = new Map();
    root.querySelector('#alerts-show-acknowledged').addEventListener('change', () => this.render());
    root.querySelector('#alerts-list').addEventListener('click', (event) => this.onClick(event));
    root.querySelector('#alerts-more').addEventListener('click', () => {
      this.shownCount += PAGE;
      this.render();
    });
  }

  /** Shows only the alerts of one van (null: all). */
  filterVehicle(vehicle) {
    this.vehicleFilter = vehicle;
    this.shownCount = PAGE;
    this.root.querySelector('#alerts-scope').textContent = vehicle ? `for ${vehicle}` : 'for the fleet';
    this.render();
  }

  async refresh() {
    const status = this.root.querySelector('#alerts-status');
    const askedAtMs = Date.now();
    try {
      // Open alerts from the server, so no open one is crowded out by newer closed ones; acknowledged ones apart.
      // sort=severity and cursor paging are used where the service offers them (a service without them ignores the
      // parameter and answers one page); the list is sorted here as well either way.
      const [open, acknowledged] = await Promise.all([
        allPages({ state: 'open', sort: 'severity', limit: SERVER_LIMIT }, MAX_OPEN),
        getJson(`/v1/alerts${query({ state: 'acknowledged', limit: ACKNOWLEDGED_SHOWN })}`),
      ]);
      const openList = open.alerts;
      this.truncated = open.more || (!open.paged && openList.length >= SERVER_LIMIT);
      this.alerts = this.withLocalAcks([...openList, ...(acknowledged.alerts ?? [])], askedAtMs);
      this.available = true;
      status.textContent = `Updated ${clock(Date.now())}.${this.truncated ? ` Showing ${openList.length} open alerts; there are more.` : ''}`;
      status.className = 'muted small';
    } catch (error) {
      this.available = !(error instanceof NotAvailableError);
      this.alerts = [];
      status.textContent = describeError(error, 'Alerts');
      status.className = 'not-available small';
    }
    this.render();
    const byVehicle = new Map();
    for (const a of this.alerts) {
      if (a.state !== 'open' || !a.vehicle) continue;
      if (!byVehicle.has(a.vehicle)) byVehicle.set(a.vehicle, []);
      byVehicle.get(a.vehicle).push(a);
    }
    this.onOpenAlerts?.(byVehicle);
  }

  /** The fetched list with this page's acknowledgements that the answer could not know yet (asked before them). */
  withLocalAcks(fetched, askedAtMs) {
    for (const [id, local] of this.localAcks) {
      if (askedAtMs <= local.atMs) {
        const i = fetched.findIndex((a) => a.id === id);
        if (i >= 0) fetched[i] = local.alert;
        else fetched.push(local.alert);
      } else {
        this.localAcks.delete(id);
      }
    }
    return fetched;
  }

  render() {
    const showAcknowledged = this.root.querySelector('#alerts-show-acknowledged').checked;
    const matching = this.alerts
      .filter((a) => a.state === 'open' || (showAcknowledged && a.state === 'acknowledged'))
      .filter((a) => !this.vehicleFilter || a.vehicle === this.vehicleFilter)
      .sort((a, b) => (a.state === b.state ? 0 : a.state === 'open' ? -1 : 1) || alertOrder(a, b));
    const shown = matching.slice(0, this.shownCount);
    const list = this.root.querySelector('#alerts-list');
    list.dataset.count = String(shown.length);
    list.dataset.open = String(matching.filter((a) => a.state === 'open').length);
    const more = this.root.querySelector('#alerts-more');
    more.hidden = matching.length <= shown.length;
    more.textContent = `Show ${Math.min(PAGE, matching.length - shown.length)} more of ${matching.length - shown.length}`;
    const html = shown.map((a) => this.item(a)).join('')
      || `<li class="muted small">${this.available ? 'No open alerts.' : 'No alerts to show.'}</li>`;
    // Replace the list only when it changed, so a button under the pointer is not swapped out every poll.
    if (this.lastHtml !== html) {
      list.innerHTML = html;
      this.lastHtml = html;
    }
  }

  item(a) {
    const ack = a.acknowledged;
    const who = ack ? (ack.key_label || `key ${String(ack.key_id ?? '').slice(0, 8)}`) : '';
    const rows = detailRows(a.details).map(detailRow).join('');
    return `
      <li class="alert severity-${escapeHtml(a.severity)} state-${escapeHtml(a.state)}" data-alert-id="${escapeHtml(a.id)}"
          data-vehicle="${escapeHtml(a.vehicle)}" data-kind="${escapeHtml(a.kind)}" data-state="${escapeHtml(a.state)}"
          data-severity="${escapeHtml(a.severity)}">
        <div class="alert-head">
          <span class="severity" title="${escapeHtml(a.severity)}">${escapeHtml(SEVERITY_WORDS[a.severity] ?? a.severity)}</span>
          <a href="${escapeHtml(alertLink(a))}" class="alert-vehicle" title="open ${escapeHtml(a.vehicle)} around ${escapeHtml(dateTime(a.started_at))}">${escapeHtml(a.vehicle)} at ${escapeHtml(clock(a.started_at))}</a>
          <span class="alert-kind">${escapeHtml(ALERT_KIND_WORDS[a.kind] ?? a.kind)}</span>
        </div>
        <p class="alert-plain">${escapeHtml(plainLine(a))}</p>
        <details class="alert-details" data-alert-id="${escapeHtml(a.id)}"${this.openDetails.has(a.id) ? ' open' : ''}>
          <summary>details</summary>
          <p class="small">${escapeHtml(a.technical_summary ?? a.summary)}</p>
          <table class="small detail-table"><tbody>
            <tr><th>severity</th><td>${escapeHtml(a.severity)}</td></tr>
            <tr><th>started</th><td>${escapeHtml(dateTime(a.started_at))}</td></tr>
            <tr><th>last held</th><td>${escapeHtml(a.ended_at ? dateTime(a.ended_at) : 'still holds')}</td></tr>
            <tr><th>occurrences</th><td>${escapeHtml(String(a.count))}</td></tr>
            ${rows}
          </tbody></table>
        </details>
        <div class="alert-foot">
          ${a.state === 'open'
            ? `<button type="button" class="acknowledge" data-alert-id="${escapeHtml(a.id)}">Acknowledge</button>`
            : `<span class="alert-state" data-acknowledged-by="${escapeHtml(who)}" data-acknowledged-at="${escapeHtml(ack?.at ?? '')}">${
              ack ? `acknowledged by ${escapeHtml(who)} at ${escapeHtml(dateTime(ack.at))}` : escapeHtml(a.state)}</span>`}
        </div>
      </li>`;
  }

  async onClick(event) {
    const summary = event.target.closest('details.alert-details > summary');
    if (summary) {
      // Remember which details are open, so the next poll's redraw keeps them open.
      const id = summary.parentElement.dataset.alertId;
      setTimeout(() => {
        if (summary.parentElement.open) this.openDetails.add(id);
        else this.openDetails.delete(id);
        this.lastHtml = null;
      }, 0);
      return;
    }
    const button = event.target.closest('button.acknowledge');
    if (!button) return;
    button.disabled = true;
    const id = button.dataset.alertId;
    try {
      const updated = await postJson(`/v1/alerts/${encodeURIComponent(id)}/acknowledge`);
      const i = this.alerts.findIndex((a) => a.id === id);
      if (i >= 0) this.alerts[i] = { ...this.alerts[i], ...updated };
      this.localAcks.set(id, { alert: i >= 0 ? this.alerts[i] : updated, atMs: Date.now() });
      this.render();
    } catch (error) {
      button.disabled = false;
      this.root.querySelector('#alerts-status').textContent = describeError(error, 'Acknowledge');
    }
  }
}
