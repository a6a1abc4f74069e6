// Live alerts list (polled) with acknowledge.
import { describeError, getJson, NotAvailableError, postJson, query } from './api.js';
import { ALERT_KIND_WORDS, escapeHtml, utcDateTime } from './format.js';

export class AlertsList {
  constructor(root, onOpenVan) {
    this.root = root;
    this.onOpenVan = onOpenVan;
    this.alerts = [];
    this.available = true;
    this.vehicleFilter = null;
    root.querySelector('#alerts-show-acknowledged').addEventListener('change', () => this.render());
    root.querySelector('#alerts-list').addEventListener('click', (event) => this.onClick(event));
  }

  /** Shows only the alerts of one van (null: all). */
  filterVehicle(vehicle) {
    this.vehicleFilter = vehicle;
    this.root.querySelector('#alerts-scope').textContent = vehicle ? `for ${vehicle}` : 'for the fleet';
    this.render();
  }

  async refresh() {
    const status = this.root.querySelector('#alerts-status');
    try {
      const body = await getJson(`/v1/alerts${query({ limit: 100 })}`);
      this.alerts = body.alerts ?? [];
      this.available = true;
      status.textContent = `Updated ${utcDateTime(new Date().toISOString())}.`;
      status.className = 'muted small';
    } catch (error) {
      this.available = !(error instanceof NotAvailableError);
      this.alerts = [];
      status.textContent = describeError(error, 'Alerts');
      status.className = 'not-available small';
    }
    this.render();
  }

  render() {
    const showAcknowledged = this.root.querySelector('#alerts-show-acknowledged').checked;
    const shown = this.alerts
      .filter((a) => a.state === 'open' || (showAcknowledged && a.state === 'acknowledged'))
      .filter((a) => !this.vehicleFilter || a.vehicle === this.vehicleFilter)
      .sort((a, b) => (b.started_at ?? '').localeCompare(a.started_at ?? ''));
    const list = this.root.querySelector('#alerts-list');
    list.dataset.count = String(shown.length);
    const html = shown.map((a) => `
      <li class="alert severity-${escapeHtml(a.severity)} state-${escapeHtml(a.state)}" data-alert-id="${escapeHtml(a.id)}"
          data-vehicle="${escapeHtml(a.vehicle)}" data-kind="${escapeHtml(a.kind)}" data-state="${escapeHtml(a.state)}">
        <div class="alert-head">
          <span class="severity">${escapeHtml(a.severity)}</span>
          <a href="#/van/${encodeURIComponent(a.vehicle)}" class="alert-vehicle">${escapeHtml(a.vehicle)}</a>
          <span class="alert-kind">${escapeHtml(ALERT_KIND_WORDS[a.kind] ?? a.kind)}</span>
        </div>
        <div class="alert-summary">${escapeHtml(a.summary)}${a.count > 1 ? ` (${a.count} times)` : ''}</div>
        <div class="alert-foot">
          <span class="muted small">since ${utcDateTime(a.started_at)}${a.ended_at ? `, ended ${utcDateTime(a.ended_at)}` : ''}</span>
          ${a.state === 'open'
            ? `<button type="button" class="acknowledge" data-alert-id="${escapeHtml(a.id)}">Acknowledge</button>`
            : `<span class="alert-state">${escapeHtml(a.state)}</span>`}
        </div>
      </li>`).join('') || `<li class="muted small">${this.available ? 'No open alerts.' : 'No alerts to show.'}</li>`;
    // Replace the list only when it changed, so a button under the pointer is not swapped out every poll.
    if (this.lastHtml !== html) {
      list.innerHTML = html;
      this.lastHtml = html;
    }
  }

  async onClick(event) {
    const button = event.target.closest('button.acknowledge');
    if (!button) return;
    button.disabled = true;
    const id = button.dataset.alertId;
    try {
      const updated = await postJson(`/v1/alerts/${encodeURIComponent(id)}/acknowledge`);
      const i = this.alerts.findIndex((a) => a.id === id);
      if (i >= 0) this.alerts[i] = { ...this.alerts[i], ...updated };
      this.render();
    } catch (error) {
      button.disabled = false;
      this.root.querySelector('#alerts-status').textContent = describeError(error, 'Acknowledge');
    }
  }
}
