// Small formatting helpers (UTC times, numbers with units, plain words for codes).

export function utcTime(iso) {
  if (!iso) return '—';
  const d = new Date(iso);
  return Number.isNaN(d.getTime()) ? '—' : d.toISOString().slice(11, 19) + ' UTC';
}

export function utcTimeTenths(iso) {
  if (!iso) return '—';
  const d = new Date(iso);
  return Number.isNaN(d.getTime()) ? '—' : d.toISOString().slice(11, 21);
}

export function utcDateTime(iso) {
  if (!iso) return '—';
  const d = new Date(iso);
  return Number.isNaN(d.getTime()) ? '—' : d.toISOString().slice(0, 19).replace('T', ' ') + ' UTC';
}

export function num(value, digits = 1, unit = '') {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  const text = value.toFixed(digits);
  return (/^-0(\.0*)?$/.test(text) ? text.slice(1) : text) + (unit ? ` ${unit}` : '');
}

export function speedKmh(mps) {
  return num(mps * 3.6, 0, 'km/h');
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
