// The reader's choices, kept in this browser (localStorage): time zone (the browser's own or UTC), unit system (metric
// or imperial) and after how long without news a van counts as silent. Every view formats through these.

const STORE = 'fusionservice.preferences';
const DEFAULTS = { zone: 'local', units: 'metric', silentAfterS: 300 };
const listeners = new Set();

function load() {
  try {
    const saved = JSON.parse(localStorage.getItem(STORE) ?? '{}');
    const out = { ...DEFAULTS };
    if (saved.zone === 'local' || saved.zone === 'utc') out.zone = saved.zone;
    if (saved.units === 'metric' || saved.units === 'imperial') out.units = saved.units;
    if (Number.isFinite(saved.silentAfterS) && saved.silentAfterS >= 5 && saved.silentAfterS <= 86400) out.silentAfterS = saved.silentAfterS;
    return out;
  } catch {
    return { ...DEFAULTS };
  }
}

let current = load();

/** The current choices: { zone: 'local'|'utc', units: 'metric'|'imperial', silentAfterS }. */
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

/** Wires the three controls of the top bar to the stored choices. */
export function bindPreferenceControls(zoneSelect, unitsSelect, silentInput) {
  const p = current;
  zoneSelect.querySelector('option[value="local"]').textContent = `this computer (${localZoneName()})`;
  zoneSelect.value = p.zone;
  unitsSelect.value = p.units;
  silentInput.value = String(Math.round(p.silentAfterS / 60 * 10) / 10);
  document.body.dataset.zone = p.zone;
  document.body.dataset.units = p.units;
  zoneSelect.addEventListener('change', () => setPreferences({ zone: zoneSelect.value }));
  unitsSelect.addEventListener('change', () => setPreferences({ units: unitsSelect.value }));
  silentInput.addEventListener('change', () => {
    const minutes = Number(silentInput.value);
    if (Number.isFinite(minutes) && minutes * 60 >= 5 && minutes * 60 <= 86400) {
      silentInput.setCustomValidity('');
      setPreferences({ silentAfterS: minutes * 60 });
    } else {
      silentInput.setCustomValidity('Between 0.1 and 1440 minutes.');
      silentInput.reportValidity();
    }
  });
}
