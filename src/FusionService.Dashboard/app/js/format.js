// Small formatting helpers: times in the reader's zone (local or UTC), numbers with units in the reader's unit system,
// ages, and plain words for codes.
import { preferences } from './preferences.js';

const pad = (n, w = 2) => String(n).padStart(w, '0');

function parts(ms) {
  const d = new Date(ms);
  const utc = preferences().zone === 'utc';
  return {
    y: utc ? d.getUTCFullYear() : d.getFullYear(),
    mo: (utc ? d.getUTCMonth() : d.getMonth()) + 1,
    d: utc ? d.getUTCDate() : d.getDate(),
    h: utc ? d.getUTCHours() : d.getHours(),
    mi: utc ? d.getUTCMinutes() : d.getMinutes(),
    s: utc ? d.getUTCSeconds() : d.getSeconds(),
    ms: utc ? d.getUTCMilliseconds() : d.getMilliseconds(),
    offsetMin: utc ? 0 : -d.getTimezoneOffset(),
  };
}

function toMs(time) {
  if (time === null || time === undefined || time === '') return NaN;
  return typeof time === 'number' ? time : Date.parse(time);
}

/** The zone's short name for a time: "UTC", or the browser zone's offset ("UTC+1", "UTC-3:30"). */
export function zoneLabel(time = Date.now()) {
  if (preferences().zone === 'utc') return 'UTC';
  const off = parts(toMs(time)).offsetMin;
  if (off === 0) return 'UTC+0';
  const sign = off > 0 ? '+' : '-';
  const a = Math.abs(off);
  return `UTC${sign}${Math.floor(a / 60)}${a % 60 ? `:${pad(a % 60)}` : ''}`;
}

/** "14:02:11 UTC" (or the local clock with its offset). Accepts an ISO string or milliseconds. */
export function clock(time) {
  const ms = toMs(time);
  if (!Number.isFinite(ms)) return '—';
  const p = parts(ms);
  return `${pad(p.h)}:${pad(p.mi)}:${pad(p.s)} ${zoneLabel(ms)}`;
}

/** "14:02:11.4", without the zone (tables whose heading names it). */
export function clockTenths(time) {
  const ms = toMs(time);
  if (!Number.isFinite(ms)) return '—';
  const p = parts(ms);
  return `${pad(p.h)}:${pad(p.mi)}:${pad(p.s)}.${Math.floor(p.ms / 100)}`;
}

/** "2026-12-04 14:02:11 UTC". */
export function dateTime(time) {
  const ms = toMs(time);
  if (!Number.isFinite(ms)) return '—';
  const p = parts(ms);
  return `${p.y}-${pad(p.mo)}-${pad(p.d)} ${pad(p.h)}:${pad(p.mi)}:${pad(p.s)} ${zoneLabel(ms)}`;
}

/** The value of an <input type="datetime-local"> for a time, in the reader's zone (seconds kept). */
export function toPickerValue(time) {
  const ms = toMs(time);
  if (!Number.isFinite(ms)) return '';
  const p = parts(ms);
  return `${p.y}-${pad(p.mo)}-${pad(p.d)}T${pad(p.h)}:${pad(p.mi)}:${pad(p.s)}`;
}

/** Milliseconds for the value of an <input type="datetime-local">, read in the reader's zone; NaN when empty. */
export function fromPickerValue(value) {
  if (!value) return NaN;
  const m = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2})(?:\.(\d+))?)?$/.exec(value);
  if (!m) return NaN;
  const [y, mo, d, h, mi, s] = [1, 2, 3, 4, 5, 6].map((i) => Number(m[i] ?? 0));
  return preferences().zone === 'utc'
    ? Date.UTC(y, mo - 1, d, h, mi, s)
    : new Date(y, mo - 1, d, h, mi, s).getTime();
}

/** Start of the reader's calendar day holding ms. */
export function startOfDayMs(ms) {
  const p = parts(ms);
  return preferences().zone === 'utc' ? Date.UTC(p.y, p.mo - 1, p.d) : new Date(p.y, p.mo - 1, p.d).getTime();
}

/** A duration in plain words: "42 s", "7 min", "3 h 5 min", "2 d 4 h". */
export function duration(seconds) {
  if (!Number.isFinite(seconds)) return '—';
  const s = Math.max(0, Math.round(seconds));
  if (s < 90) return `${s} s`;
  const min = Math.round(s / 60);
  if (min < 90) return `${min} min`;
  const h = Math.floor(min / 60);
  if (h < 48) return `${h} h${min % 60 ? ` ${min % 60} min` : ''}`;
  return `${Math.floor(h / 24)} d${h % 24 ? ` ${h % 24} h` : ''}`;
}

/** How long ago a time was: "42 s ago" ("in 3 s" for a clock ahead of this computer's). */
export function age(time, nowMs = Date.now()) {
  const ms = toMs(time);
  if (!Number.isFinite(ms)) return '—';
  const s = (nowMs - ms) / 1000;
  return s < -1 ? `in ${duration(-s)}` : `${duration(Math.max(0, s))} ago`;
}

export function num(value, digits = 1, unit = '') {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  const text = value.toFixed(digits);
  return (/^-0(\.0*)?$/.test(text) ? text.slice(1) : text) + (unit ? ` ${unit}` : '');
}

// Conversion factors, NIST SP 811 (2008 edition), Appendix B: 1 ft = 0.3048 m exactly and 1 mi = 1609.344 m exactly
// (international foot and mile, 1959); derived from them: 1 mi/h = 1609.344 m / 3600 s = 0.44704 m/s exactly, and
// 1 ft/s² = 0.3048 m/s² exactly. 1 km/h = 1000 m / 3600 s = 1/3.6 m/s exactly (SI, by the definitions of km and h).
const M_PER_FT = 0.3048;
const FT_PER_M = 1 / M_PER_FT;
const M_PER_MI = 1609.344;
const MPS_PER_MPH = M_PER_MI / 3600;
const KMH_PER_MPS = 3.6;

const imperial = () => preferences().units === 'imperial';

/** A speed in km/h or mph. */
export function speed(mps, digits = 0) {
  if (!Number.isFinite(mps)) return '—';
  return imperial() ? num(mps / MPS_PER_MPH, digits, 'mph') : num(mps * KMH_PER_MPS, digits, 'km/h');
}

/** An acceleration in m/s² or ft/s². */
export function acceleration(mps2, digits = 2) {
  if (!Number.isFinite(mps2)) return '—';
  return imperial() ? num(mps2 * FT_PER_M, digits, 'ft/s²') : num(mps2, digits, 'm/s²');
}

// Raw values of the API are named by their SI unit (accuracy_m, speed_mps, accel_mps2, yaw_rate_dps, lat_deg, silent_s):
// the suffix, the quantity's words and how it is shown in the reader's unit system (the longest suffix first).
const RAW_SUFFIXES = [
  ['_mps2', (v) => acceleration(v, 2)],
  ['_mps', (v) => speed(v, 1)],
  ['_dps', (v) => num(v, 2, '°/s')],
  ['_deg', (v, key) => (key === 'lat_deg' || key === 'lon_deg' ? `${num(v, 6)}°` : `${num(v, 1)}°`)],
  ['_rad', (v) => num(v, 3, 'rad')],
  ['_m', (v) => length(v, 2)],
  ['_s', (v) => num(v, 1, 's')],
];

/** A number of the API's details without a unit suffix: whole numbers as they are, others to 4 significant digits. */
function plainNumber(v) {
  return Number.isInteger(v) ? String(v) : v.toPrecision(4).replace(/(\.\d*?)0+$/, '$1').replace(/\.$/, '');
}

/**
 * A raw value named by its API key, for display in the reader's unit system with its unit: { name, text }, e.g.
 * ('speed_mps', 8.94) -> { name: 'speed', text: '32.2 km/h' } or '20.0 mph'; ('accuracy_m', 3) -> 'accuracy', '3.00 m'
 * or '9.84 ft'. Keys without a known unit suffix keep their name and value. The API stays in SI; only the page converts.
 */
export function rawValue(key, value) {
  const k = String(key);
  if (typeof value === 'number' && Number.isFinite(value)) {
    for (const [suffix, show] of RAW_SUFFIXES) {
      if (k.endsWith(suffix) && k.length > suffix.length) {
        return { name: k.slice(0, -suffix.length).replaceAll('_', ' '), text: show(value, k) };
      }
    }
    return { name: k.replaceAll('_', ' '), text: plainNumber(value) };
  }
  return { name: k.replaceAll('_', ' '), text: String(value) };
}

// Units of residual components as the explanation endpoint names them (residual_units), shown as raw values are.
const RESIDUAL_UNITS = {
  m: (v) => length(v, 2),
  'm/s': (v) => speed(v, 2),
  'm/s^2': (v) => acceleration(v, 2),
  deg: (v) => `${num(v, 2)}°`,
  'deg/s': (v) => num(v, 2, '°/s'),
};

/** One residual component in the reader's unit system, with its unit ("1.20 ft", "0.72 km/h"). */
export function residualValue(value, unit) {
  if (!Number.isFinite(value)) return '—';
  const show = RESIDUAL_UNITS[unit];
  return show ? show(value) : `${num(value, 2)}${unit ? ` ${unit}` : ''}`;
}

/** Unit of speed() alone ("km/h" or "mph"). */
export function speedUnit() {
  return imperial() ? 'mph' : 'km/h';
}

/** A short length (sizes, uncertainties, shifts) in m or ft. */
export function length(m, digits = 1) {
  if (!Number.isFinite(m)) return '—';
  return imperial() ? num(m * FT_PER_M, digits, 'ft') : num(m, digits, 'm');
}

/** Two semi-axes "a × b m" (or ft). */
export function axes(majorM, minorM, digits = 1) {
  if (!Number.isFinite(majorM) || !Number.isFinite(minorM)) return '—';
  return imperial()
    ? `${num(majorM * FT_PER_M, digits)} × ${num(minorM * FT_PER_M, digits)} ft`
    : `${num(majorM, digits)} × ${num(minorM, digits)} m`;
}

/** A distance travelled in km or mi. */
export function distance(m, digits = 2) {
  if (!Number.isFinite(m)) return '—';
  return imperial() ? num(m / M_PER_MI, digits, 'mi') : num(m / 1000, digits, 'km');
}

/** For the scale bar: the longest round length (1, 2 or 5 x 10^n in the reader's units) not above maxM, in metres, and its words. */
export function roundLength(maxM) {
  const nice = (x) => {
    if (!(x > 0)) return 0;
    const p = Math.pow(10, Math.floor(Math.log10(x)));
    for (const f of [5, 2, 1]) if (f * p <= x) return f * p;
    return p;
  };
  if (imperial()) {
    if (maxM >= M_PER_MI) {
      const mi = nice(maxM / M_PER_MI);
      return { m: mi * M_PER_MI, text: `${mi} mi` };
    }
    const ft = nice(maxM * FT_PER_M);
    return { m: ft / FT_PER_M, text: `${ft} ft` };
  }
  const m = nice(maxM);
  return { m, text: m >= 1000 ? `${m / 1000} km` : `${m} m` };
}

/** A compass direction in words for a course (degrees clockwise from north): "north-east". */
export function compassWords(courseDeg) {
  if (!Number.isFinite(courseDeg)) return '';
  const names = ['north', 'north-east', 'east', 'south-east', 'south', 'south-west', 'west', 'north-west'];
  return names[Math.round((((courseDeg % 360) + 360) % 360) / 45) % 8];
}

export function escapeHtml(text) {
  return String(text ?? '').replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]);
}

/** Plain words for the alert kinds of the API. */
export const ALERT_KIND_WORDS = {
  gated_burst: 'GNSS fixes rejected in a burst',
  inconsistent_sensor: 'sensor disagrees with the estimate',
  gnss_silent_while_moving: 'no GNSS while moving',
  track_reset: 'track restarted',
  wheel_scale_out_of_band: 'wheel scale out of range',
  moved_without_driving: 'moving with wheels still (towed?)',
  sensor_isolated: 'sensor ignored: disagrees with the others',
  vehicle_silent: 'van has gone quiet',
};

/** Plain words for the sensor names of the API. */
export const SENSOR_WORDS = {
  gnss_position: 'GNSS position',
  gnss_velocity: 'GNSS velocity',
  wheel: 'wheel speed',
  imu: 'gyro and accelerometer',
};

export const WHITENESS_WORDS = {
  white: 'independent over time',
  correlated: 'errors keep pulling the same way',
  insufficient_data: 'too few values to judge',
};

export const VERDICT_WORDS = {
  consistent: 'consistent',
  correlated: 'errors persist over time',
  too_optimistic: 'noisier than the model says',
  too_pessimistic: 'quieter than the model says',
  insufficient_data: 'too few values to judge',
};
