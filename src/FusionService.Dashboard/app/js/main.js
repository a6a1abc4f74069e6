// Dashboard entry: sign-in with a read key, hash routes (#/fleet, #/van/<id>), polling of the fleet and the alerts.
import { forgetKey, getJson, KeyRefusedError, storedKey, storeKey } from './api.js';
import { AlertsList } from './alerts.js';
import { FleetView } from './fleetView.js';
import { VehicleView } from './vehicleView.js';
import { BaseLayer } from './baseLayer.js';
import { bindPreferenceControls, onPreferencesChanged } from './preferences.js';
import { duration } from './format.js';

const $ = (selector) => document.querySelector(selector);

async function loadSettings() {
  try {
    const response = await fetch('settings.json', { cache: 'no-store' });
    if (response.ok) return await response.json();
  } catch {
    // No settings: defaults below.
  }
  return { tile_url_template: null, tile_attribution: null, poll_interval_ms: 1500, silent_after_s: null };
}

function show(view) {
  for (const id of ['#sign-in-view', '#fleet-view', '#vehicle-view']) $(id).hidden = id !== view;
  $('#alerts-pane').hidden = view === '#sign-in-view';
  $('#sign-out').hidden = view === '#sign-in-view';
  document.body.dataset.view = view.slice(1);
}

async function main() {
  const settings = await loadSettings();
  if (settings.tile_url_template && settings.tile_attribution) {
    for (const note of document.querySelectorAll('.tile-attribution')) note.textContent = settings.tile_attribution;
  }
  const openVan = (vehicle) => { location.hash = `#/van/${encodeURIComponent(vehicle)}`; };
  const baseLayer = new BaseLayer($('#base-layer-note'));
  const fleet = new FleetView($('#fleet-view'), settings, openVan, baseLayer);
  const vehicle = new VehicleView($('#vehicle-view'), settings, () => fleet.currentFrame(), baseLayer);
  const alerts = new AlertsList($('#alerts-pane'), (byVehicle) => fleet.setOpenAlerts(byVehicle));
  bindPreferenceControls($('#pref-zone'), $('#pref-units'));
  const silentLimit = $('#silent-limit-value');
  silentLimit.textContent = Number.isFinite(settings.silent_after_s) ? duration(settings.silent_after_s) : 'as the service says';
  silentLimit.dataset.silentAfterS = String(settings.silent_after_s ?? '');
  onPreferencesChanged(() => {
    alerts.lastHtml = null;
    alerts.render();
    if (document.body.dataset.view === 'fleet-view') fleet.render();
    else if (document.body.dataset.view === 'vehicle-view') vehicle.redraw();
  });

  // One polling loop for the page's life; it does nothing while signed out.
  const poll = async () => {
    if (storedKey()) {
      try {
        if (document.body.dataset.view === 'fleet-view') {
          await fleet.refresh();
          baseLayer.refresh();
        }
        await alerts.refresh();
      } catch (error) {
        if (error instanceof KeyRefusedError) signOut('The key was refused; sign in again.');
      }
    }
    setTimeout(poll, settings.poll_interval_ms ?? 1500);
  };

  const route = async () => {
    if (!storedKey()) {
      show('#sign-in-view');
      return;
    }
    // #/van/<id> or #/van/<id>?from=..&to=..&at=.. (a window and a time, as the alerts link them).
    const match = /^#\/van\/([^?]+)(?:\?(.*))?$/.exec(location.hash);
    if (match) {
      const id = decodeURIComponent(match[1]);
      const params = Object.fromEntries(new URLSearchParams(match[2] ?? ''));
      show('#vehicle-view');
      alerts.filterVehicle(id);
      await vehicle.open(id, params);
    } else {
      vehicle.close();
      show('#fleet-view');
      alerts.filterVehicle(null);
      await fleet.refresh().catch(() => {});
    }
  };

  const signOut = (message) => {
    forgetKey();
    $('#sign-in-message').textContent = message ?? '';
    show('#sign-in-view');
  };

  $('#sign-in-form').addEventListener('submit', async (event) => {
    event.preventDefault();
    const key = $('#key-input').value.trim();
    const message = $('#sign-in-message');
    if (!key) {
      message.textContent = 'Paste a read key first.';
      return;
    }
    message.textContent = 'Checking the key…';
    try {
      await getJson('/v1/vehicles', key);
    } catch (error) {
      message.textContent = error instanceof KeyRefusedError
        ? (error.status === 403 ? 'That key has no read role.' : 'That key was not accepted.')
        : `The service did not answer: ${error.message}`;
      return;
    }
    storeKey(key);
    $('#key-input').value = '';
    message.textContent = '';
    if (location.hash !== '#/fleet') location.hash = '#/fleet';
    else await route();
  });
  $('#sign-out').addEventListener('click', () => signOut('Signed out.'));
  window.addEventListener('hashchange', route);
  await route();
  poll();
}

main();
