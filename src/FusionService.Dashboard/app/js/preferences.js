// The reader's choices, kept in this browser (localStorage): time zone (the browser's own or UTC) and unit system (metric
// or imperial). Every view formats through these. When a van counts as silent is not a reader's choice: the service's
// one silence limit (settings.json silent_after_s) decides it, for the page and the API alike.

const STORE = 'fusionservice.preferences';
const DEFAULTS = { zone: 'local', units: 'metric' };
const listeners = new Set();

function load() {
  try {
    const saved = JSON.parse(localStorage.getItem(STORE) ?? '{}');
    const out = { ...DEFAULTS };
    if (saved.zone === 'local' || saved.zone === 'utc') out.zone = saved.zone;
    if (saved.units === 'metric' || saved.units === 'imperial') out.units = saved.units;
    return out;
  } catch {
    return { ...DEFAULTS };
  }
}

let current = load();

/** The current choices: { zone: 'local'|'utc', units: 'metric'|'imperial' }. */
export function preferences() {
  return current;
}

/** Changes some choices, remembers them and tells every listener. */
export function setPreferences(changes) {
  current = { ...current, ...changes };
  localStorage.setItem(STORE, JSON.stringify(current));
  document.body.dataset.zone = current.zone;
  document.body.dataset.units = current.units;
  for (const listener of listeners) listener(current);
}

/** Calls listener(preferences) after every change. */
export function onPreferencesChanged(listener) {
  listeners.add(listener);
}

/** Name of the browser's own time zone, e.g. "Europe/Lisbon" (or "local" when the browser does not say). */
export function localZoneName() {
  try {
    return Intl.DateTimeFormat().resolvedOptions().timeZone || 'local';
  } catch {
    return 'local';
  }
}

/** Wires the two controls of the top bar to the stored choices. */
export function bindPreferenceControls(zoneSelect, unitsSelect) {
  const p = current;
  zoneSelect.querySelector('option[value="local"]').textContent = `this computer (${localZoneName()})`;
  zoneSelect.value = p.zone;
  unitsSelect.value = p.units;
  document.body.dataset.zone = p.zone;
  document.body.dataset.units = p.units;
  zoneSelect.addEventListener('change', () => setPreferences({ zone: zoneSelect.value }));
  unitsSelect.addEventListener('change', () => setPreferences({ units: unitsSelect.value }));
}
