// Local metric frame for drawing: WGS-84 latitude/longitude to east/north metres around an origin.
//
// The map is drawn in a local east/north (ENU, height dropped) frame centred on the fleet's centroid, using the
// equirectangular approximation on the WGS-84 ellipsoid (NIMA TR8350.2: a = 6378137 m, e^2 = 0.00669437999014):
//   east  = N(phi0) * cos(phi0) * (lon - lon0)      N = a / sqrt(1 - e^2 sin^2 phi0)   (prime-vertical radius)
//   north = M(phi0) * (lat - lat0)                  M = a (1 - e^2) / (1 - e^2 sin^2 phi0)^(3/2)   (meridian radius)
// (angles in radians). Distances are right to first order at the origin and the error grows with the square of the
// distance from it: on the 55 km Geoscience Australia test line (38 deg S) the frame's distance is 0.15 m long with the
// origin at the line's midpoint and 70 m short with the origin at one end; over a town a few km across it is far below
// a pixel. Not valid across the antimeridian or near the poles. Drawing only: the service computes every number in its
// own frames.

const A_M = 6378137.0;
const E2 = 0.00669437999014;
const RAD = Math.PI / 180;

/** A local frame around (lat0Deg, lon0Deg). */
export function createFrame(lat0Deg, lon0Deg) {
  const phi0 = lat0Deg * RAD;
  const s = Math.sin(phi0);
  const w = Math.sqrt(1 - E2 * s * s);
  const primeVerticalM = A_M / w;
  const meridianM = (A_M * (1 - E2)) / (w * w * w);
  const eastPerDegM = primeVerticalM * Math.cos(phi0) * RAD;
  const northPerDegM = meridianM * RAD;
  return {
    lat0Deg,
    lon0Deg,
    eastPerDegM,
    northPerDegM,
    toLocal(latDeg, lonDeg) {
      return { eastM: (lonDeg - lon0Deg) * eastPerDegM, northM: (latDeg - lat0Deg) * northPerDegM };
    },
    toGeodetic(eastM, northM) {
      return { latDeg: lat0Deg + northM / northPerDegM, lonDeg: lon0Deg + eastM / eastPerDegM };
    },
  };
}

/** The centroid (mean latitude and longitude) of points with lat_deg/lon_deg, or null for none. */
export function centroid(points) {
  const valid = points.filter((p) => Number.isFinite(p.lat_deg) && Number.isFinite(p.lon_deg));
  if (valid.length === 0) return null;
  const lat = valid.reduce((sum, p) => sum + p.lat_deg, 0) / valid.length;
  const lon = valid.reduce((sum, p) => sum + p.lon_deg, 0) / valid.length;
  return { latDeg: lat, lonDeg: lon };
}

/**
 * SVG rotation (degrees) of an ellipse whose major axis points orientationDeg clockwise from north, on a screen with
 * x to the east and y down (north up): the major axis lies along (sin t, -cos t), i.e. rotate(t - 90).
 */
export function ellipseRotationSvgDeg(orientationDeg) {
  return orientationDeg - 90;
}

/** Screen direction (x right, y down) of the ellipse's major axis for orientationDeg clockwise from north. */
export function majorAxisScreenDirection(orientationDeg) {
  const r = ellipseRotationSvgDeg(orientationDeg) * RAD;
  return { x: Math.cos(r), y: Math.sin(r) };
}

/** The longest 1, 2 or 5 x 10^n metres not exceeding maxM (for the scale bar). */
export function niceLengthM(maxM) {
  if (!(maxM > 0)) return 0;
  const p = Math.pow(10, Math.floor(Math.log10(maxM)));
  for (const f of [5, 2, 1]) {
    if (f * p <= maxM) return f * p;
  }
  return p;
}

/** A length in plain words: "500 m", "2 km". */
export function formatLengthM(m) {
  return m >= 1000 ? `${m / 1000} km` : `${m} m`;
}
