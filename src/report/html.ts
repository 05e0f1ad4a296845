/**
 * The calibration report as one self-contained HTML file: inline CSS and
 * inline SVG only, no scripts, no fonts or images fetched from anywhere (a
 * Content-Security-Policy meta tag forbids every network load).
 *
 * Contents: key figures and the safety caution; the rig seen from above and
 * from the side (frustum, axes and magnified 1-sigma position ellipse per
 * camera); the extrinsics table with 1-sigma; per camera a residual scatter
 * (du, dv) with 1/2/3-sigma circles, a histogram of residual norms and a
 * coverage map of the image; RMS per frame with rejected views marked; the
 * solver stages, warnings and rejected views.
 *
 * Figures in the residual plots: σ is the camera's empirical per-axis sigma,
 * σ = RMS / √2 (RMS of the error norm over both axes). For an isotropic 2-D
 * Gaussian the error norm is Rayleigh distributed, so the fraction inside
 * k σ is 1 − exp(−k²/2): 39.3 %, 86.5 %, 98.9 % for k = 1, 2, 3 (Rayleigh CDF).
 */
import type { RigFile } from '../io/types.js';
import { positionCovariance } from '../rig/output.js';
import type { CameraResult, RigSolution } from '../rig/solve.js';
import { SAFETY_CAUTION } from './summary.js';

export interface HtmlReportOptions {
  /** Page title (default: `Rig calibration report — <rig name>`). */
  title?: string;
  /** Timestamp printed in the header (default: now, ISO 8601). */
  generatedAt?: string;
  /** Scatter points per camera at most (default 4000); the plot says when it subsamples. */
  maxScatterPoints?: number;
  /** Detection dots per camera in the coverage map at most (default 4000). */
  maxCoveragePoints?: number;
  /** Line under the title saying where the residuals come from (e.g. "re-evaluated at the rig file's extrinsics"). */
  provenance?: string;
}

const DEFAULTS = { maxScatterPoints: 4000, maxCoveragePoints: 4000 };

/** Categorical camera colours (own palette: ink-friendly mid tones that survive greyscale printing at different lightness). */
const CAMERA_COLOURS = ['#22736e', '#b4532a', '#4b57a8', '#a07a16', '#2f7d3b', '#9c3f7e', '#2a6a98', '#6d5a3a', '#c0394b', '#4f6f52'];
const AXIS_COLOURS = { x: '#cf3e4f', y: '#3c9a55', z: '#2f68c0' };
const REJECT = '#b3261e';

const DEG = 180 / Math.PI;

function esc(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

function fmt(x: number, digits: number): string {
  return Number.isFinite(x) ? x.toFixed(digits) : '—';
}

/** Compact number for SVG coordinates (2 decimals, no trailing zeros). */
function n(x: number): string {
  const r = Math.round(x * 100) / 100;
  return Object.is(r, -0) ? '0' : String(r);
}

/** 1, 2 or 5 × 10^k closest below x (x > 0). */
function niceBelow(x: number): number {
  const p = Math.pow(10, Math.floor(Math.log10(x)));
  const m = x / p;
  return (m >= 5 ? 5 : m >= 2 ? 2 : 1) * p;
}

/** Evenly spaced subsample of indices 0..count-1, at most `max` of them. */
function subsample(count: number, max: number): number[] {
  if (count <= max) return Array.from({ length: count }, (_, i) => i);
  const out: number[] = [];
  for (let k = 0; k < max; k++) out.push(Math.floor((k * count) / max));
  return out;
}

function cameraColour(i: number): string {
  return CAMERA_COLOURS[i % CAMERA_COLOURS.length]!;
}

// ---------------------------------------------------------------- rig views

interface Vec3 {
  x: number;
  y: number;
  z: number;
}

type Plane = 'top' | 'side';

/** Top view: looking down along the reference's +y (image down): x right, z up the page. Side view: from the reference's +x side: z right, −y up. */
function planeCoords(p: Vec3, plane: Plane): [number, number] {
  return plane === 'top' ? [p.x, p.z] : [p.z, -p.y];
}

function act(cam: CameraResult, p: Vec3): Vec3 {
  const R = cam.T_ref_cam.R;
  const t = cam.T_ref_cam.t;
  return {
    x: R[0]! * p.x + R[1]! * p.y + R[2]! * p.z + t[0]!,
    y: R[3]! * p.x + R[4]! * p.y + R[5]! * p.z + t[1]!,
    z: R[6]! * p.x + R[7]! * p.y + R[8]! * p.z + t[2]!,
  };
}

/** Frustum corner directions in the camera frame (image corners unprojected; pinhole fallback), scaled to depth `d` (or length d when wide). */
function frustumCorners(cam: CameraResult, resolution: [number, number], d: number): Vec3[] {
  const [w, h] = resolution;
  const corners: [number, number][] = [
    [0, 0],
    [w - 1, 0],
    [w - 1, h - 1],
    [0, h - 1],
  ];
  const ray = new Float64Array(3);
  const fx = cam.intrinsics[0]!, fy = cam.intrinsics[1]!, cx = cam.intrinsics[2]!, cy = cam.intrinsics[3]!;
  return corners.map(([u, v]) => {
    let x: number, y: number, z: number;
    if (cam.model.unproject(cam.intrinsics, [u, v], ray) && ray[2]! > 0.3) {
      [x, y, z] = [ray[0]! / ray[2]!, ray[1]! / ray[2]!, 1];
    } else if (cam.model.unproject(cam.intrinsics, [u, v], ray)) {
      // Wide field of view: draw the ray with length d instead of depth d.
      return { x: ray[0]! * d, y: ray[1]! * d, z: ray[2]! * d };
    } else {
      [x, y, z] = [(u - cx) / fx, (v - cy) / fy, 1];
    }
    const s = d / Math.max(Math.hypot(x, y, z) > 3 ? Math.hypot(x, y, z) / 3 : 1, 1e-9);
    return { x: x * s, y: y * s, z: z * s };
  });
}

/** 2x2 marginal covariance in plane coordinates from the 3x3 position covariance P (row-major). */
function planeCovariance(P: Float64Array, plane: Plane): [number, number, number] {
  // top: (x, z) → indices 0, 2. side: (z, −y) → indices 2, 1 with the sign of y flipped.
  if (plane === 'top') return [P[0]!, P[2]!, P[8]!];
  return [P[8]!, -P[7]!, P[4]!];
}

/** Semi-axes and angle (radians, from the plane's first axis) of the 1-sigma ellipse of [[a, b], [b, c]]. */
function ellipse(a: number, b: number, c: number): { r1: number; r2: number; angle: number } {
  const m = 0.5 * (a + c);
  const dlt = Math.sqrt(Math.max(0, 0.25 * (a - c) * (a - c) + b * b));
  const l1 = Math.max(0, m + dlt);
  const l2 = Math.max(0, m - dlt);
  const angle = 0.5 * Math.atan2(2 * b, a - c);
  return { r1: Math.sqrt(l1), r2: Math.sqrt(l2), angle };
}

interface RigGeometry {
  frustumDepth: number;
  ellipseScale: number;
  maxSigmaMm: number;
  positions: Float64Array[];
}

function rigGeometry(solution: RigSolution): RigGeometry {
  const cams = solution.cameras;
  let extent = 0;
  for (const a of cams) for (const b of cams) {
    extent = Math.max(extent, Math.hypot(a.T_ref_cam.t[0]! - b.T_ref_cam.t[0]!, a.T_ref_cam.t[1]! - b.T_ref_cam.t[1]!, a.T_ref_cam.t[2]! - b.T_ref_cam.t[2]!));
  }
  if (!(extent > 0)) extent = 0.2;
  const frustumDepth = 0.22 * extent;
  const positions = cams.map((c) => positionCovariance(c.T_ref_cam.t, c.covariance));
  let maxSigma = 0;
  for (const P of positions) maxSigma = Math.max(maxSigma, Math.sqrt(Math.max(0, P[0]!, P[4]!, P[8]!)));
  // Magnify so the largest 1-sigma semi-axis is drawn at about 8 % of the rig's extent; a round factor.
  const ellipseScale = maxSigma > 0 ? Math.max(1, niceBelow((0.08 * extent) / maxSigma)) : 0;
  return { frustumDepth, ellipseScale, maxSigmaMm: maxSigma * 1000, positions };
}

function rigView(solution: RigSolution, geo: RigGeometry, plane: Plane): string {
  const W = 460;
  const H = 360;
  const pad = 34;
  const d = geo.frustumDepth;
  interface Drawn {
    cam: CameraResult;
    apex: [number, number];
    corners: [number, number][];
    axes: { key: 'x' | 'y' | 'z'; tip: [number, number] }[];
    ell?: { r1: number; r2: number; angle: number };
  }
  const drawn: Drawn[] = solution.cameras.map((cam) => {
    const res = solution.session.cameras[cam.index]!.resolution;
    const apex3 = act(cam, { x: 0, y: 0, z: 0 });
    const corners = frustumCorners(cam, res, d).map((p) => planeCoords(act(cam, p), plane));
    const L = 0.55 * d;
    const axes = (['x', 'y', 'z'] as const).map((key) => {
      const p = { x: key === 'x' ? L : 0, y: key === 'y' ? L : 0, z: key === 'z' ? L : 0 };
      return { key, tip: planeCoords(act(cam, p), plane) };
    });
    const out: Drawn = { cam, apex: planeCoords(apex3, plane), corners, axes };
    if (!cam.isReference && geo.ellipseScale > 0) {
      const [a, b, c] = planeCovariance(geo.positions[cam.index]!, plane);
      const e = ellipse(a, b, c);
      out.ell = { r1: e.r1 * geo.ellipseScale, r2: e.r2 * geo.ellipseScale, angle: e.angle };
    }
    return out;
  });
  let minX = Infinity, maxX = -Infinity, minY = Infinity, maxY = -Infinity;
  const grow = (p: [number, number], r = 0) => {
    minX = Math.min(minX, p[0] - r);
    maxX = Math.max(maxX, p[0] + r);
    minY = Math.min(minY, p[1] - r);
    maxY = Math.max(maxY, p[1] + r);
  };
  for (const dr of drawn) {
    grow(dr.apex, dr.ell ? dr.ell.r1 : 0);
    dr.corners.forEach((p) => grow(p));
    dr.axes.forEach((a) => grow(a.tip));
  }
  const spanX = Math.max(maxX - minX, 1e-3);
  const spanY = Math.max(maxY - minY, 1e-3);
  const s = Math.min((W - 2 * pad) / spanX, (H - 2 * pad - 16) / spanY);
  const ox = pad + (W - 2 * pad - s * spanX) / 2;
  const oy = pad + (H - 2 * pad - 16 - s * spanY) / 2;
  const X = (p: [number, number]) => ox + (p[0] - minX) * s;
  const Y = (p: [number, number]) => oy + (maxY - p[1]) * s;
  const parts: string[] = [];
  parts.push(`<rect class="plot-bg" x="0" y="0" width="${W}" height="${H}"/>`);
  for (const dr of drawn) {
    const col = cameraColour(dr.cam.index);
    const [ax, ay] = [X(dr.apex), Y(dr.apex)];
    const cs = dr.corners.map((p) => `${n(X(p))},${n(Y(p))}`);
    // The pyramid: apex to each corner, and the far rectangle.
    parts.push(
      `<g class="frustum" data-camera="${esc(dr.cam.name)}"><polygon points="${cs.join(' ')}" fill="${col}" fill-opacity="0.10" stroke="${col}" stroke-width="1"/>` +
        `<path d="${dr.corners.map((p) => `M${n(ax)} ${n(ay)}L${n(X(p))} ${n(Y(p))}`).join('')}" stroke="${col}" stroke-width="1" fill="none" stroke-opacity="0.8"/></g>`,
    );
  }
  for (const dr of drawn) {
    const [ax, ay] = [X(dr.apex), Y(dr.apex)];
    for (const a of dr.axes) {
      parts.push(`<line x1="${n(ax)}" y1="${n(ay)}" x2="${n(X(a.tip))}" y2="${n(Y(a.tip))}" stroke="${AXIS_COLOURS[a.key]}" stroke-width="2" stroke-linecap="round"/>`);
    }
    if (dr.ell && dr.ell.r1 * s > 0.2) {
      // Plane coordinates have their second axis pointing up; SVG's y points down, hence the minus sign on the angle.
      parts.push(
        `<ellipse class="sigma-ellipse" cx="${n(ax)}" cy="${n(ay)}" rx="${n(Math.max(dr.ell.r1 * s, 0.8))}" ry="${n(Math.max(dr.ell.r2 * s, 0.8))}" transform="rotate(${n(-dr.ell.angle * DEG)} ${n(ax)} ${n(ay)})"/>`,
      );
    }
    parts.push(`<circle cx="${n(ax)}" cy="${n(ay)}" r="2.6" fill="${cameraColour(dr.cam.index)}"/>`);
  }
  // Labels last, placed greedily at the first free spot around the camera (labels of nearby cameras would overlap).
  const placed: [number, number, number, number][] = [];
  for (const dr of drawn) {
    const [ax, ay] = [X(dr.apex), Y(dr.apex)];
    const text = `${dr.cam.name}${dr.cam.isReference ? ' (ref)' : ''}`;
    // Bold 12 px text: about 7.5 px per character, plus the halo stroke.
    const w = 7.5 * text.length + 4;
    const hgt = 15;
    const spots: [number, number, 'start' | 'end'][] = [];
    for (const dy of [-6, 16, -22, 32, -38, 48]) spots.push([6, dy, 'start'], [-6, dy, 'end']);
    let choice = spots[0]!;
    for (const sp of spots) {
      const x0 = sp[2] === 'start' ? ax + sp[0] : ax + sp[0] - w;
      const y0 = ay + sp[1] - 11;
      const inside = x0 >= 2 && x0 + w <= W - 2 && y0 >= 2 && y0 + hgt <= H - 2;
      const free = inside && placed.every(([a, b, c, e]) => x0 + w < a || x0 > c || y0 + hgt < b || y0 > e);
      if (free) {
        choice = sp;
        break;
      }
    }
    const x0 = choice[2] === 'start' ? ax + choice[0] : ax + choice[0] - w;
    placed.push([x0, ay + choice[1] - 11, x0 + w, ay + choice[1] - 11 + hgt]);
    parts.push(`<text class="cam-label" x="${n(ax + choice[0])}" y="${n(ay + choice[1])}" text-anchor="${choice[2]}" fill="${cameraColour(dr.cam.index)}">${esc(text)}</text>`);
  }
  // Scale bar (bottom left) and the plane's axes (bottom right).
  const worldBar = niceBelow((W - 2 * pad) / s / 4);
  const barPx = worldBar * s;
  const by = H - 14;
  const barLabel = worldBar >= 1 ? `${n(worldBar)} m` : `${n(worldBar * 1000)} mm`;
  parts.push(`<path class="scale-bar" d="M${pad} ${by - 4}V${by}H${n(pad + barPx)}V${by - 4}"/><text class="tick" x="${n(pad + barPx + 6)}" y="${by}">${barLabel}</text>`);
  const [h1, h2] = plane === 'top' ? ['x', 'z'] : ['z', '−y'];
  const kx = W - 60;
  parts.push(
    `<g class="compass"><line x1="${kx}" y1="${by}" x2="${kx + 24}" y2="${by}"/><line x1="${kx}" y1="${by}" x2="${kx}" y2="${by - 24}"/>` +
      `<text class="tick" x="${kx + 27}" y="${by + 3}">${h1}</text><text class="tick" x="${kx - 4}" y="${by - 28}">${h2}</text></g>`,
  );
  const title = plane === 'top' ? 'From above' : 'From the side';
  return `<figure class="rig-view" data-testid="rig-${plane}"><figcaption>${title}</figcaption><svg viewBox="0 0 ${W} ${H}" role="img" aria-label="${title}">${parts.join('')}</svg></figure>`;
}

// ---------------------------------------------------------------- per camera

interface CameraStats {
  du: number[];
  dv: number[];
  /** Used detections' pixel positions. */
  uUsed: number[];
  vUsed: number[];
  uRej: number[];
  vRej: number[];
  sigmaPx: number;
}

function cameraStats(solution: RigSolution): CameraStats[] {
  const d = solution.session.detections;
  const stats: CameraStats[] = solution.cameras.map(() => ({ du: [], dv: [], uUsed: [], vUsed: [], uRej: [], vRej: [], sigmaPx: NaN }));
  for (let i = 0; i < d.count; i++) {
    const st = stats[d.camera[i]!];
    if (!st) continue;
    const du = solution.residualsPx[2 * i]!;
    const dv = solution.residualsPx[2 * i + 1]!;
    if (solution.detectionUsed[i] && Number.isFinite(du) && Number.isFinite(dv)) {
      st.du.push(du);
      st.dv.push(dv);
      st.uUsed.push(d.u[i]!);
      st.vUsed.push(d.v[i]!);
    } else {
      st.uRej.push(d.u[i]!);
      st.vRej.push(d.v[i]!);
    }
  }
  for (const st of stats) {
    let sq = 0;
    for (let k = 0; k < st.du.length; k++) sq += st.du[k]! * st.du[k]! + st.dv[k]! * st.dv[k]!;
    st.sigmaPx = st.du.length > 0 ? Math.sqrt(sq / st.du.length / 2) : NaN;
  }
  return stats;
}

/** Dots as zero-length round-capped subpaths in one <path>: compact for thousands of points. */
function dotPath(xs: number[], ys: number[], cls: string, extra = ''): string {
  if (xs.length === 0) return '';
  let d = '';
  for (let k = 0; k < xs.length; k++) d += `M${n(xs[k]!)} ${n(ys[k]!)}h0`;
  return `<path class="${cls}" d="${d}"${extra}/>`;
}

function residualScatter(cam: CameraResult, st: CameraStats, maxPoints: number): string {
  const S = 260;
  const c = S / 2;
  const sigma = st.sigmaPx;
  const count = st.du.length;
  if (!(count > 0 && sigma > 0)) {
    return `<figure class="plot residual-plot" data-testid="residual-plot"><figcaption>Residuals (du, dv)</figcaption><p class="empty">No detections used.</p></figure>`;
  }
  let maxAbs = 0;
  for (let k = 0; k < count; k++) maxAbs = Math.max(maxAbs, Math.abs(st.du[k]!), Math.abs(st.dv[k]!));
  // Axis half-range: at least 3.5 σ, at most 6 σ (points beyond are pinned to the border and counted).
  const half = Math.min(Math.max(3.5 * sigma, maxAbs * 1.05), 6 * sigma);
  const px = (S / 2 - 12) / half;
  const idx = subsample(count, maxPoints);
  const xs: number[] = [];
  const ys: number[] = [];
  let outside = 0;
  for (const k of idx) {
    const x = Math.max(-half, Math.min(half, st.du[k]!));
    const y = Math.max(-half, Math.min(half, st.dv[k]!));
    if (x !== st.du[k] || y !== st.dv[k]) outside++;
    xs.push(c + x * px);
    ys.push(c + y * px); // v grows downwards, like the image
  }
  const inside = [1, 2, 3].map((k) => {
    let m = 0;
    for (let j = 0; j < count; j++) if (Math.hypot(st.du[j]!, st.dv[j]!) <= k * sigma) m++;
    return m / count;
  });
  const rings = [1, 2, 3]
    .map((k) => `<circle class="sigma-ring ring-${k}" cx="${c}" cy="${c}" r="${n(k * sigma * px)}"/><text class="ring-label" x="${n(c + k * sigma * px * 0.7071 + 2)}" y="${n(c - k * sigma * px * 0.7071 - 2)}">${k}σ</text>`)
    .join('');
  const tickPx = niceBelow(half / 2);
  const ticks = [-2, -1, 1, 2]
    .filter((k) => Math.abs(k * tickPx) <= half)
    .map((k) => `<text class="tick" x="${n(c + k * tickPx * px)}" y="${S - 2}" text-anchor="middle">${n(k * tickPx)}</text>`)
    .join('');
  const svg =
    `<svg viewBox="0 0 ${S} ${S}" role="img" aria-label="residual scatter of ${esc(cam.name)}">` +
    `<rect class="plot-bg" x="0" y="0" width="${S}" height="${S}"/>` +
    `<line class="axis" x1="0" y1="${c}" x2="${S}" y2="${c}"/><line class="axis" x1="${c}" y1="0" x2="${c}" y2="${S}"/>` +
    dotPath(xs, ys, 'dots', ` stroke="${cameraColour(cam.index)}"`) +
    rings +
    ticks +
    `<text class="tick" x="${S - 4}" y="${c - 4}" text-anchor="end">du px</text><text class="tick" x="${c + 4}" y="10">dv px (down)</text>` +
    `</svg>`;
  const expected = [1, 2, 3].map((k) => 1 - Math.exp(-(k * k) / 2));
  const note =
    `σ = ${fmt(sigma, 3)} px per axis (RMS/√2). Inside 1/2/3σ: ${inside.map((f) => (100 * f).toFixed(1)).join(' / ')} % ` +
    `(Gaussian: ${expected.map((f) => (100 * f).toFixed(1)).join(' / ')} %).` +
    (idx.length < count ? ` Showing ${idx.length} of ${count} points (evenly subsampled).` : ` ${count} points.`) +
    (outside > 0 ? ` ${outside} beyond 6σ pinned to the border.` : '');
  return `<figure class="plot residual-plot" data-testid="residual-plot" data-camera="${esc(cam.name)}"><figcaption>Residuals (du, dv)</figcaption>${svg}<p class="note">${note}</p></figure>`;
}

function residualHistogram(cam: CameraResult, st: CameraStats): string {
  const W = 300;
  const H = 200;
  const l = 34, r = 8, t = 10, b = 28;
  const count = st.du.length;
  const sigma = st.sigmaPx;
  if (!(count > 0 && sigma > 0)) return `<figure class="plot histogram"><figcaption>Residual norms</figcaption><p class="empty">No detections used.</p></figure>`;
  const norms = st.du.map((x, k) => Math.hypot(x, st.dv[k]!));
  const top = 4 * sigma;
  const bins = 24;
  const width = top / bins;
  const counts = new Array<number>(bins).fill(0);
  let over = 0;
  for (const e of norms) {
    const k = Math.floor(e / width);
    if (k >= bins) over++;
    else counts[k]!++;
  }
  // Rayleigh density with the same σ, as expected counts per bin: count · (F(b) − F(a)), F(x) = 1 − exp(−x²/2σ²).
  const F = (x: number) => 1 - Math.exp(-(x * x) / (2 * sigma * sigma));
  const expected = counts.map((_, k) => count * (F((k + 1) * width) - F(k * width)));
  const maxC = Math.max(...counts, ...expected, 1);
  const X = (x: number) => l + (x / top) * (W - l - r);
  const Y = (c: number) => H - b - (c / maxC) * (H - t - b);
  const bars = counts.map((c, k) => `<rect class="bar" x="${n(X(k * width) + 0.5)}" y="${n(Y(c))}" width="${n(X(width) - l - 1)}" height="${n(H - b - Y(c))}" fill="${cameraColour(cam.index)}"/>`).join('');
  const curve = expected.map((c, k) => `${k === 0 ? 'M' : 'L'}${n(X((k + 0.5) * width))} ${n(Y(c))}`).join('');
  const rmsX = X(Math.min(Math.SQRT2 * sigma, top));
  const tickStep = niceBelow(top / 4);
  const ticks: string[] = [];
  for (let x = 0; x <= top + 1e-12; x += tickStep) ticks.push(`<text class="tick" x="${n(X(x))}" y="${H - b + 12}" text-anchor="middle">${n(x)}</text>`);
  const svg =
    `<svg viewBox="0 0 ${W} ${H}" role="img" aria-label="histogram of residual norms of ${esc(cam.name)}">` +
    `<rect class="plot-bg" x="0" y="0" width="${W}" height="${H}"/>` +
    bars +
    `<path class="expected" d="${curve}"/>` +
    `<line class="rms-line" x1="${n(rmsX)}" y1="${t}" x2="${n(rmsX)}" y2="${H - b}"/><text class="tick" x="${n(rmsX + 3)}" y="${t + 9}">RMS</text>` +
    `<line class="axis" x1="${l}" y1="${H - b}" x2="${W - r}" y2="${H - b}"/>` +
    ticks.join('') +
    `<text class="tick" x="${W - r}" y="${H - 3}" text-anchor="end">|residual| px</text>` +
    `<text class="tick" x="${l - 4}" y="${t + 8}" text-anchor="end">${maxC >= 1000 ? (maxC / 1000).toFixed(1) + 'k' : Math.round(maxC)}</text>` +
    `</svg>`;
  return `<figure class="plot histogram" data-testid="histogram" data-camera="${esc(cam.name)}"><figcaption>Residual norms</figcaption>${svg}<p class="note">Bars: detections per ${fmt(width, 3)} px bin; line: expected counts for a Gaussian with the same σ (Rayleigh).${over > 0 ? ` ${over} beyond 4σ not shown.` : ''}</p></figure>`;
}

function coverageMap(cam: CameraResult, st: CameraStats, resolution: [number, number], maxPoints: number): string {
  const [w, h] = resolution;
  const W = 300;
  const H = Math.max(80, Math.round((W * h) / Math.max(w, 1)));
  const sx = W / w;
  const sy = H / h;
  const gx = 12;
  const gy = Math.max(4, Math.round((gx * h) / w));
  const cells = new Array<number>(gx * gy).fill(0);
  for (let k = 0; k < st.uUsed.length; k++) {
    const i = Math.min(gx - 1, Math.max(0, Math.floor((st.uUsed[k]! / w) * gx)));
    const j = Math.min(gy - 1, Math.max(0, Math.floor((st.vUsed[k]! / h) * gy)));
    cells[j * gx + i]!++;
  }
  const maxCell = Math.max(...cells, 1);
  const covered = cells.filter((c) => c > 0).length;
  let rects = '';
  for (let j = 0; j < gy; j++) for (let i = 0; i < gx; i++) {
    const c = cells[j * gx + i]!;
    const x = (i * W) / gx;
    const y = (j * H) / gy;
    rects +=
      c > 0
        ? `<rect x="${n(x)}" y="${n(y)}" width="${n(W / gx)}" height="${n(H / gy)}" fill="${cameraColour(cam.index)}" fill-opacity="${n(0.08 + 0.45 * Math.sqrt(c / maxCell))}"/>`
        : `<rect class="gap" x="${n(x + 1)}" y="${n(y + 1)}" width="${n(W / gx - 2)}" height="${n(H / gy - 2)}"/>`;
  }
  const idx = subsample(st.uUsed.length, maxPoints);
  const dots = dotPath(
    idx.map((k) => st.uUsed[k]! * sx),
    idx.map((k) => st.vUsed[k]! * sy),
    'cov-dots',
  );
  const ridx = subsample(st.uRej.length, Math.min(maxPoints, 1000));
  const rej = ridx.length
    ? `<path class="rej-marks" d="${ridx.map((k) => `M${n(st.uRej[k]! * sx - 2)} ${n(st.vRej[k]! * sy - 2)}l4 4m0 -4l-4 4`).join('')}"/>`
    : '';
  const svg =
    `<svg viewBox="0 0 ${W} ${H}" role="img" aria-label="coverage map of ${esc(cam.name)}">` +
    `<rect class="plot-bg" x="0" y="0" width="${W}" height="${H}"/>${rects}${dots}${rej}<rect class="frame" x="0.5" y="0.5" width="${W - 1}" height="${H - 1}"/></svg>`;
  const pct = (100 * covered) / cells.length;
  const note =
    `${w}×${h} px image; ${covered} of ${cells.length} cells (${gx}×${gy} grid, ${pct.toFixed(0)} %) hold a detection; ` +
    `hatched cells are gaps${st.uRej.length ? `; × marks the ${st.uRej.length} detections not used` : ''}.` +
    (idx.length < st.uUsed.length ? ` Dots: ${idx.length} of ${st.uUsed.length} (evenly subsampled).` : '') +
    ` <strong>Gaps in coverage are the commonest cause of a poor calibration</strong>: move the target into the empty regions, corners and edges included.`;
  return `<figure class="plot coverage-map${pct < 60 ? ' low' : ''}" data-testid="coverage-map" data-camera="${esc(cam.name)}"><figcaption>Coverage of the image</figcaption>${svg}<p class="note">${note}</p></figure>`;
}

// ---------------------------------------------------------------- per frame

function frameChart(solution: RigSolution): string {
  const s = solution.session;
  const d = s.detections;
  const nf = s.frames.length;
  const sq = new Float64Array(nf);
  const cnt = new Int32Array(nf);
  for (let i = 0; i < d.count; i++) {
    if (!solution.detectionUsed[i]) continue;
    const du = solution.residualsPx[2 * i]!, dv = solution.residualsPx[2 * i + 1]!;
    if (!Number.isFinite(du) || !Number.isFinite(dv)) continue;
    sq[d.frame[i]!]! += du * du + dv * dv;
    cnt[d.frame[i]!]!++;
  }
  const rejected = new Map<string, string[]>();
  for (const v of solution.rejectedViews) {
    let list = rejected.get(v.frame);
    if (!list) rejected.set(v.frame, (list = []));
    list.push(`${v.camera}/${v.target}: ${v.reason}`);
  }
  const rms = Array.from({ length: nf }, (_, f) => (cnt[f]! > 0 ? Math.sqrt(sq[f]! / cnt[f]!) : NaN));
  const W = 900;
  const H = 220;
  const l = 40, r = 10, t = 24, b = 30;
  const finite = rms.filter(Number.isFinite);
  const maxR = finite.reduce((a, x) => Math.max(a, x), Math.max(solution.rmsPx || 0, 1e-6)) * 1.1;
  const bw = (W - l - r) / Math.max(nf, 1);
  const Y = (x: number) => H - b - (x / maxR) * (H - t - b);
  let bars = '';
  let marks = '';
  for (let f = 0; f < nf; f++) {
    const x = l + f * bw;
    const rej = rejected.get(s.frames[f]!);
    const v = rms[f]!;
    const tip = `frame ${s.frames[f]}: ${Number.isFinite(v) ? `RMS ${v.toFixed(3)} px over ${cnt[f]} detections` : 'no detections used'}${rej ? `; set aside: ${rej.join('; ')}` : ''}`;
    if (Number.isFinite(v)) {
      bars += `<rect class="fbar${rej ? ' has-rejected' : ''}" x="${n(x + bw * 0.12)}" y="${n(Y(v))}" width="${n(Math.max(bw * 0.76, 0.6))}" height="${n(H - b - Y(v))}"><title>${esc(tip)}</title></rect>`;
    }
    if (rej) {
      const cx = x + bw / 2;
      marks += `<path class="rej-marker" d="M${n(cx)} ${n(t - 1)}l4 -7h-8z"><title>${esc(tip)}</title></path>`;
    }
  }
  const overall = Number.isFinite(solution.rmsPx) ? `<line class="rms-line" x1="${l}" y1="${n(Y(solution.rmsPx))}" x2="${W - r}" y2="${n(Y(solution.rmsPx))}"/><text class="tick rms-label" x="${W - r}" y="10" text-anchor="end">- - overall RMS ${solution.rmsPx.toFixed(3)} px</text>` : '';
  const step = niceBelow(maxR / 3);
  let yt = '';
  for (let y = step; y <= maxR; y += step) yt += `<line class="grid" x1="${l}" y1="${n(Y(y))}" x2="${W - r}" y2="${n(Y(y))}"/><text class="tick" x="${l - 4}" y="${n(Y(y) + 3)}" text-anchor="end">${n(y)}</text>`;
  const labelEvery = Math.max(1, Math.ceil(nf / 12));
  let xt = '';
  for (let f = 0; f < nf; f += labelEvery) {
    const name = s.frames[f]!;
    xt += `<text class="tick" x="${n(l + (f + 0.5) * bw)}" y="${H - b + 12}" text-anchor="middle">${esc(name.length > 10 ? name.slice(0, 9) + '…' : name)}</text>`;
  }
  const nRejFrames = s.frames.filter((f) => rejected.has(f)).length;
  const svg =
    `<svg viewBox="0 0 ${W} ${H}" role="img" aria-label="RMS per frame">` +
    `<rect class="plot-bg" x="0" y="0" width="${W}" height="${H}"/>${yt}${bars}${overall}${marks}` +
    `<line class="axis" x1="${l}" y1="${H - b}" x2="${W - r}" y2="${H - b}"/>${xt}` +
    `<text class="tick" x="${l - 4}" y="${t - 4}" text-anchor="end">px</text><text class="tick" x="${W - r}" y="${H - 4}" text-anchor="end">frame</text></svg>`;
  return (
    `<figure class="plot frame-chart" data-testid="frame-chart">${svg}<p class="note">RMS reprojection error of the detections used in each frame (all cameras). ` +
    `<span class="legend-rej">▼</span> marks the ${nRejFrames} frame${nRejFrames === 1 ? '' : 's'} with a view set aside (hover for the reason; listed below); ` +
    `bars of such frames are drawn in the warning colour.</p></figure>`
  );
}

// ---------------------------------------------------------------- tables

function extrinsicsTable(rig: RigFile, solution: RigSolution): string {
  const rows = rig.cameras.map((c, i) => {
    const cam = solution.cameras.find((x) => x.name === c.name);
    const t = c.translation.map((v) => v * 1000);
    const st = c.sigma_translation_mm;
    const sr = c.sigma_rotation_deg;
    const pm = (v: number, s: number, dv: number, ds: number) => `${fmt(v, dv)}<span class="pm"> ± ${fmt(s, ds)}</span>`;
    return (
      `<tr><th scope="row"><span class="swatch" style="background:${cameraColour(cam?.index ?? i)}"></span>${esc(c.name)}${c.parent === null ? ' <span class="tag">reference</span>' : ''}</th>` +
      `<td>${pm(t[0]!, st[0], 1, 2)}</td><td>${pm(t[1]!, st[1], 1, 2)}</td><td>${pm(t[2]!, st[2], 1, 2)}</td>` +
      `<td>${pm(c.rpy_deg[0], sr[0], 3, 3)}</td><td>${pm(c.rpy_deg[1], sr[1], 3, 3)}</td><td>${pm(c.rpy_deg[2], sr[2], 3, 3)}</td>` +
      `<td>${fmt(c.rms_px, 3)}</td><td>${c.detections_used} / ${c.detections_rejected}</td>` +
      `<td>${cam ? `${cam.viewsUsed} / ${cam.viewsRejected}` : '—'}</td></tr>`
    );
  });
  return (
    `<div class="table-wrap"><table class="extrinsics" data-testid="extrinsics"><thead><tr><th>camera</th><th>x mm</th><th>y mm</th><th>z mm</th>` +
    `<th>roll °</th><th>pitch °</th><th>yaw °</th><th>RMS px</th><th>detections used / rejected</th><th>views used / set aside</th></tr></thead>` +
    `<tbody>${rows.join('')}</tbody></table></div>` +
    `<p class="note">Pose of each camera in the reference camera's optical frame (T_${esc(rig.root)}_camera: x right, y down, z forward); ` +
    `roll-pitch-yaw are fixed-axis X, Y, Z rotations (URDF). ± is 1-sigma from the covariance scaled by sigma0²; position sigmas are along the reference axes.</p>`
  );
}

function solverTable(solution: RigSolution): string {
  const rows = solution.stages.map((st) => {
    const s = st.summary;
    return (
      `<tr><th scope="row">${esc(st.name)}</th><td>${s.iterations.length}</td><td>${s.acceptedSteps} / ${s.rejectedSteps}</td>` +
      `<td>${s.initialCost.toExponential(4)}</td><td>${s.finalCost.toExponential(4)}</td>` +
      `<td class="term-${s.termination}">${esc(s.termination.replace('_', ' '))}</td><td>${fmt(s.totalSeconds, 2)}</td><td class="msg">${esc(s.message)}</td></tr>`
    );
  });
  const f = solution.summary;
  return (
    `<div class="table-wrap"><table class="solver" data-testid="solver"><thead><tr><th>stage</th><th>iterations</th><th>steps accepted / rejected</th><th>initial cost</th><th>final cost</th><th>termination</th><th>time s</th><th class="msg">criterion</th></tr></thead>` +
    `<tbody>${rows.join('')}</tbody></table></div>` +
    `<p class="note">Final problem: ${f.numResiduals} residuals, ${f.numFreeParameters} free parameters, ${f.numResidualBlocks} views` +
    (f.numEliminatedBlocks > 0 ? `, ${f.numEliminatedBlocks} frame poses eliminated by the Schur complement` : ', each frame pose fitted on its own') +
    `. Cost = ½ Σ (whitened residual)².</p>`
  );
}

const MAX_REJECTED_ROWS = 200;

function rejectedTable(solution: RigSolution): string {
  const list = solution.rejectedViews;
  if (list.length === 0) return `<p class="ok-line">No views were set aside.</p>`;
  const shown = list.slice(0, MAX_REJECTED_ROWS);
  const rows = shown.map((v) => `<tr><td>${esc(v.frame)}</td><td class="txt">${esc(v.camera)}</td><td class="txt">${esc(v.target)}</td><td class="txt">${esc(v.status)}</td><td class="msg">${esc(v.reason)}</td></tr>`).join('');
  return (
    `<div class="table-wrap"><table class="rejected" data-testid="rejected-views"><thead><tr><th>frame</th><th class="msg">camera</th><th class="msg">target</th><th class="msg">status</th><th class="msg">reason</th></tr></thead><tbody>${rows}</tbody></table></div>` +
    (list.length > shown.length ? `<p class="note">… and ${list.length - shown.length} more (see the command's --json output).</p>` : '')
  );
}

// ---------------------------------------------------------------- page

const CSS = `
:root{--ink:#1c2733;--muted:#5d6b78;--paper:#f7f5f0;--card:#fffefb;--rule:#d9d3c7;--accent:#22736e;--warn:#a3620a;--bad:${REJECT};--plot:#fbfaf6}
*{box-sizing:border-box}
body{margin:0;background:var(--paper);color:var(--ink);font:14px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,"Helvetica Neue",Arial,sans-serif}
main{max-width:1180px;margin:0 auto;padding:20px 24px 48px}
header.top{border-bottom:3px solid var(--accent);padding-bottom:10px;margin-bottom:16px}
h1{font-size:24px;margin:0 0 2px;letter-spacing:-.01em}
h2{font-size:17px;margin:28px 0 10px;padding-left:10px;border-left:5px solid var(--accent)}
h3{font-size:15px;margin:0 0 8px;display:flex;align-items:center;gap:8px}
.sub{color:var(--muted);margin:0}
.tiles{display:grid;grid-template-columns:repeat(auto-fit,minmax(150px,1fr));gap:10px;margin:14px 0}
.tile{background:var(--card);border:1px solid var(--rule);border-radius:6px;padding:8px 12px}
.tile .k{font-size:12px;color:var(--muted);text-transform:uppercase;letter-spacing:.04em}
.tile .v{font-size:19px;font-weight:600;font-variant-numeric:tabular-nums;white-space:nowrap}
.tile.bad .v{color:var(--bad)}
.caution{border:2px solid var(--warn);background:#fff6e6;border-radius:6px;padding:10px 14px;font-weight:500}
.caution::before{content:"⚠ ";color:var(--warn)}
.rig-views{display:grid;grid-template-columns:1fr 1fr;gap:14px}
figure{margin:0;background:var(--card);border:1px solid var(--rule);border-radius:6px;padding:8px}
figcaption{font-weight:600;font-size:13px;margin-bottom:4px}
svg{display:block;width:100%;height:auto}
.plot-bg{fill:var(--plot)}
.cam-label{font-size:12px;font-weight:600;paint-order:stroke;stroke:var(--plot);stroke-width:3px}
.tick{font-size:10px;fill:var(--muted)}
.ring-label{font-size:9px;fill:var(--ink)}
.axis{stroke:#9aa3ab;stroke-width:1}
.grid{stroke:#e6e1d6;stroke-width:1}
.scale-bar,.compass line{stroke:var(--ink);stroke-width:1.4;fill:none}
.sigma-ellipse{fill:#e3a7221f;stroke:#a3620a;stroke-width:1.4;stroke-dasharray:3 2}
.sigma-ring{fill:none;stroke:var(--ink);stroke-opacity:.55;stroke-width:1}
.ring-2{stroke-dasharray:4 3}.ring-3{stroke-dasharray:1.5 3}
.dots{stroke-width:2.2;stroke-linecap:round;stroke-opacity:.45;fill:none}
.cov-dots{stroke:var(--ink);stroke-width:1.6;stroke-linecap:round;stroke-opacity:.35;fill:none}
.rej-marks{stroke:var(--bad);stroke-width:1;stroke-opacity:.75;fill:none}
.gap{fill:url(#hatch);stroke:#e3a722;stroke-opacity:.5}
.frame{fill:none;stroke:var(--ink);stroke-width:1}
.bar{fill-opacity:.8}
.expected{fill:none;stroke:var(--ink);stroke-width:1.5}
.rms-line{stroke:var(--warn);stroke-width:1.2;stroke-dasharray:5 3}
.fbar{fill:var(--accent)}
.fbar.has-rejected{fill:#d98a5f}
.rej-marker{fill:var(--bad)}
.legend-rej{color:var(--bad)}
.rms-label{fill:var(--warn)}
.note{font-size:12px;color:var(--muted);margin:6px 2px 0}
.empty{color:var(--muted);font-style:italic}
.camera-card{background:var(--card);border:1px solid var(--rule);border-radius:8px;padding:12px;margin-bottom:14px;border-top:4px solid var(--c)}
.camera-card .meta{font-weight:400;color:var(--muted);font-size:12px}
.camera-plots{display:grid;grid-template-columns:1fr 1.1fr 1.1fr;gap:10px;align-items:start}
.camera-plots figure{border:none;background:transparent;padding:0}
.coverage-map.low figcaption::after{content:" — sparse";color:var(--bad)}
.table-wrap{overflow-x:auto}
table{border-collapse:collapse;width:100%;background:var(--card);font-variant-numeric:tabular-nums;font-size:13px}
th,td{padding:5px 8px;border-bottom:1px solid var(--rule);text-align:right;white-space:nowrap}
th:first-child,td:first-child{text-align:left}
thead th{font-size:12px;color:var(--muted);font-weight:600;border-bottom:2px solid var(--ink);background:#efece4}
td.msg{white-space:normal;text-align:left;min-width:240px}
th.msg,td.txt{text-align:left}
.pm{color:var(--muted);font-size:11px;display:block}
.swatch{display:inline-block;width:10px;height:10px;border-radius:2px;margin-right:6px;vertical-align:baseline}
.tag{font-size:11px;background:#e4efe9;color:var(--accent);border-radius:3px;padding:1px 5px}
.term-converged{color:var(--accent);font-weight:600}.term-no_convergence,.term-failure{color:var(--bad);font-weight:600}
ul.warnings{padding-left:20px}ul.warnings li{margin:4px 0;color:#6b4508}
.ok-line{color:var(--accent)}
footer{margin-top:32px;color:var(--muted);font-size:12px;border-top:1px solid var(--rule);padding-top:8px}
@media (max-width:860px){.rig-views,.camera-plots{grid-template-columns:1fr}}
@media print{
  @page{margin:14mm}
  body{background:#fff;font-size:11px}
  main{max-width:none;padding:0}
  .tile,figure,.camera-card,table{background:#fff}
  .plot-bg{fill:#fff}
  .camera-card,figure,.caution,tr{break-inside:avoid}
  h2{break-after:avoid}
  .camera-plots{grid-template-columns:1fr 1.1fr 1.1fr}
  .rig-views{grid-template-columns:1fr 1fr}
  .table-wrap{overflow:visible}
  th,td{white-space:normal}
}
`;

/** Hatch pattern referenced by gap cells (defined once per page in a hidden SVG). */
const DEFS = `<svg width="0" height="0" style="position:absolute" aria-hidden="true"><defs><pattern id="hatch" patternUnits="userSpaceOnUse" width="6" height="6" patternTransform="rotate(45)"><rect width="6" height="6" fill="#fff4dc"/><line x1="0" y1="0" x2="0" y2="6" stroke="#e3a722" stroke-width="2"/></pattern></defs></svg>`;

/** Renders the whole report. `rig` is the rig file built from (or loaded for) `solution`. */
export function renderHtmlReport(solution: RigSolution, rig: RigFile, options: HtmlReportOptions = {}): string {
  const o = { ...DEFAULTS, ...options };
  const title = o.title ?? `Rig calibration report — ${rig.name}`;
  const when = o.generatedAt ?? new Date().toISOString();
  const geo = rigGeometry(solution);
  const stats = cameraStats(solution);
  const d = solution.session.detections;
  let usedTotal = 0;
  for (let i = 0; i < d.count; i++) usedTotal += solution.detectionUsed[i]!;
  const q = rig.quality;
  const tiles = [
    ['cameras', String(rig.cameras.length), false],
    ['RMS px', fmt(q.rms_px, 3), false],
    ['sigma0', fmt(q.sigma0, 3), !(q.sigma0 > 0.5 && q.sigma0 < 2)],
    ['frames used', `${q.frames_used} / ${solution.session.frames.length}`, false],
    ['detections used', `${usedTotal} / ${d.count}`, false],
    ['views set aside', String(solution.rejectedViews.length), solution.rejectedViews.length > 0],
    ['solver', q.converged ? 'converged' : 'not converged', !q.converged],
  ] as const;
  const tileHtml = tiles.map(([k, v, bad]) => `<div class="tile${bad ? ' bad' : ''}"><div class="k">${k}</div><div class="v">${esc(v)}</div></div>`).join('');

  const ellipseNote =
    geo.ellipseScale > 0
      ? `Ellipses: 1-sigma position uncertainty of each camera (marginal of the position covariance in the drawing plane), <strong>magnified ×${geo.ellipseScale}</strong> to be visible; the largest 1-sigma along a reference axis is ${geo.maxSigmaMm.toFixed(2)} mm. The reference camera is fixed (the gauge) and has none.`
      : 'No position uncertainty to draw (only the reference camera, or zero covariance).';
  const rigSection =
    `<div class="rig-views">${rigView(solution, geo, 'top')}${rigView(solution, geo, 'side')}</div>` +
    `<p class="note">Both views are drawn in the reference camera's optical frame (${esc(rig.root)}: x right, y down, z forward). ` +
    `From above: looking down the reference's +y axis (x right, z up the page), which is a top view when the reference camera is mounted level. ` +
    `From the side: looking from the reference's +x side (z right, −y up). Frustums reach ${(geo.frustumDepth * 1000).toFixed(0)} mm in front of each camera; ` +
    `axes: <span style="color:${AXIS_COLOURS.x}">x</span>, <span style="color:${AXIS_COLOURS.y}">y</span>, <span style="color:${AXIS_COLOURS.z}">z</span> of each camera. ${ellipseNote}</p>`;

  const cards = solution.cameras
    .map((cam) => {
      const st = stats[cam.index]!;
      const res = solution.session.cameras[cam.index]!.resolution;
      return (
        `<section class="camera-card" data-testid="camera-card" data-camera="${esc(cam.name)}" style="--c:${cameraColour(cam.index)}">` +
        `<h3><span class="swatch" style="background:${cameraColour(cam.index)}"></span>${esc(cam.name)}${cam.isReference ? ' <span class="tag">reference</span>' : ''}` +
        `<span class="meta">${esc(cam.model.name)} · RMS ${fmt(cam.rmsPx, 3)} px · ${cam.detectionsUsed} detections used, ${cam.detectionsRejected} rejected · ${cam.viewsUsed} views used, ${cam.viewsRejected} set aside</span></h3>` +
        `<div class="camera-plots">${residualScatter(cam, st, o.maxScatterPoints)}${residualHistogram(cam, st)}${coverageMap(cam, st, res, o.maxCoveragePoints)}</div></section>`
      );
    })
    .join('');

  const warnings = solution.warnings.length
    ? `<ul class="warnings" data-testid="warnings">${solution.warnings.map((w) => `<li>${esc(w)}</li>`).join('')}</ul>`
    : `<p class="ok-line">No warnings.</p>`;

  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${esc(title)}</title>
<style>${CSS}</style>
</head>
<body>
${DEFS}
<main>
<header class="top"><h1>${esc(title)}</h1>
<p class="sub">Rig “${esc(rig.name)}” · reference camera ${esc(rig.root)} · session ${esc(solution.session.name)} · generated ${esc(when)}</p>
${o.provenance ? `<p class="sub">${esc(o.provenance)}</p>` : ''}</header>
<div class="tiles">${tileHtml}</div>
<p class="caution" data-testid="caution">${esc(SAFETY_CAUTION)}</p>
<h2>The rig</h2>
${rigSection}
<h2>Extrinsics</h2>
${extrinsicsTable(rig, solution)}
<h2>Cameras</h2>
<p class="note">Per camera: reprojection residuals of the detections used in the final solve, their norms, and where in the image the detections fell. Scatter plots show at most ${o.maxScatterPoints} points per camera (evenly subsampled) to keep this file small.</p>
${cards}
<h2>Frames</h2>
${frameChart(solution)}
<h2>Solver</h2>
${solverTable(solution)}
<h2>Warnings</h2>
${warnings}
<h2>Views set aside</h2>
${rejectedTable(solution)}
<footer>One self-contained file: inline SVG and CSS, no scripts, nothing loaded from the network. Lengths in mm, angles in degrees, residuals in px.</footer>
</main>
</body>
</html>
`;
}
