/**
 * Checkerboard detection with sub-pixel corners.
 *
 * Method:
 * 1. Corner response: the ChESS detector (S. Bennett, J. Lasenby, "ChESS –
 *    Quick and Robust Detection of Chess-board Features", CVIU 2014) on a
 *    lightly smoothed image. With I_0..I_15 sampled on a ring of radius 5 px,
 *      sum  = Σ_{n=0..3} |(I_n + I_{n+8}) − (I_{n+4} + I_{n+12})|,
 *      diff = Σ_{n=0..7} |I_n − I_{n+8}|,
 *      mean = |mean(ring) − mean(5 px cross at the centre)|,
 *      R    = sum − diff − 16·mean.
 *    R is large at X-junctions (saddles) and ≤ 0 on edges, L-corners and
 *    flat areas. Candidates are local maxima of R (5x5 non-maximum
 *    suppression) above a threshold relative to the strongest response.
 * 2. Grid growing from a seed: a candidate with two pairs of opposite
 *    neighbours and the four diagonal neighbours forms a 3x3 seed whose four
 *    cells must alternate dark/bright. The grid then grows a full row or
 *    column at a time; each new corner is predicted by quadratic
 *    extrapolation of the last three corners along its line (linear with
 *    two), which follows perspective and moderate radial distortion, and is
 *    accepted when a candidate lies within 0.3 of the local spacing.
 * 3. Checks: the grown grid must be exactly `columns x rows` inner corners
 *    (in either image direction); larger and smaller grids are rejected, so
 *    a partly visible board or a board of another size is never reported.
 *    A board may be declared in either order ([6, 9] for a 9 x 6 board):
 *    the ids then follow the declared order, which is the same board turned
 *    by 90°. Every pair of
 *    adjacent cells must have opposite colours with a clear contrast.
 * 4. Orientation of point ids (formats.md: id = row·columns + column):
 *    - +x (increasing column) runs along the side with `columns` corners;
 *    - the board is seen from its printed side, so (+x, +y) keep the image's
 *      handedness (u right, v down): cross(x_dir, y_dir) > 0;
 *    - the square diagonally outside corner 0, equivalently the cell spanned
 *      by corners 0, 1, columns, columns+1, is black.
 *    When columns + rows is odd these rules fix the ids. When it is even the
 *    pattern is symmetric under a 180° rotation (and under 90° when
 *    columns = rows is even); the rules then leave 2 (or 4) labelings and we
 *    pick the one whose +x direction points most nearly along +u (the board is
 *    assumed not to be upside down), and report `ambiguous180: true` so that
 *    the solver's flip rejection can act. A board printed with inverted
 *    colours (white outside corner 0) is accepted only where that is
 *    indistinguishable anyway (columns + rows even): the colour rule is then
 *    dropped and the ambiguity reported.
 * 5. Sub-pixel refinement of every corner by gradient orthogonality
 *    (W. Förstner, E. Gülch, "A fast operator for detection and precise
 *    location of distinct points, corners and centres of circular features",
 *    1987): at a saddle c every image gradient g_p is orthogonal to p − c, so
 *    c solves (Σ w_p g_p g_pᵀ) c = Σ w_p g_p g_pᵀ p with Gaussian weights w_p
 *    centred on c (sigma 0.2 x the distance to the nearest other edge,
 *    estimated as the shorter neighbour spacing times the sine of the angle
 *    between the grid lines, clamped to [1.2, 5] px; halved once if the
 *    iteration wanders off), gradients by central differences of the smoothed image;
 *    iterated to a step below 1e-3 px. The checker pattern is
 *    point-symmetric about the junction (also under perspective), so the
 *    fixed point is unbiased for any symmetric blur.
 *
 * Limits: squares of at least about 14 px (ring radius 5 px); the whole
 * board must be visible.
 */
import { OptionsError } from '../errors.js';
import type { GreyImage } from './image.js';

export interface BoardSize {
  /** Inner corners along a row (the board's +x). */
  columns: number;
  /** Inner corners along a column (the board's +y). */
  rows: number;
}

export interface CheckerboardOptions {
  /** Gaussian smoothing before the corner response, px (default 1: the 5-tap binomial filter). */
  smoothSigmaPx?: number;
  /** Candidate threshold as a fraction of the strongest response (default 0.04). */
  relativeThreshold?: number;
  /** Absolute candidate threshold on R, grey levels (default 24). */
  absoluteThreshold?: number;
  /** Number of seeds tried before giving up (default 40). */
  maxSeeds?: number;
  /** Maximum number of refinement iterations per corner (default 30). */
  maxRefineIterations?: number;
}

export type CheckerboardAmbiguity = 'none' | 'rot180' | 'rot90';

export interface CheckerboardFound {
  found: true;
  columns: number;
  rows: number;
  /** (u, v) per point id, id = row·columns + column; length 2·columns·rows. */
  corners: Float64Array;
  /** True when the pattern is symmetric under 180° (or 90°) rotation, so the ids may be rotated. */
  ambiguous180: boolean;
  ambiguity: CheckerboardAmbiguity;
  /** Median grey-level difference between adjacent cells. */
  contrast: number;
  /** Weakest adjacent-cell difference divided by the median one, in (0, 1]; low means uneven or doubtful. */
  score: number;
  /** Median spacing of neighbouring corners, px. */
  spacingPx: number;
}

export type CheckerboardFailureReason = 'no_corners' | 'no_grid' | 'wrong_size' | 'colour_check';

export interface CheckerboardNotFound {
  found: false;
  reason: CheckerboardFailureReason;
  message: string;
  /** Size of the largest grid seen (columns-like, rows-like), when any. */
  largestGrid?: [number, number];
}

export type CheckerboardResult = CheckerboardFound | CheckerboardNotFound;

const RING_RADIUS = 5;
// 16 samples on a circle of radius 5 px, angle k·22.5°, rounded to pixels.
const RING: [number, number][] = Array.from({ length: 16 }, (_, k) => {
  const a = (k * Math.PI) / 8;
  return [Math.round(RING_RADIUS * Math.cos(a)), Math.round(RING_RADIUS * Math.sin(a))];
});

/** Separable Gaussian blur (edge clamped) into a new array. */
export function gaussianBlur(src: Float32Array, width: number, height: number, sigmaPx: number): Float32Array {
  const out = new Float32Array(src.length);
  if (!(sigmaPx > 0)) {
    out.set(src);
    return out;
  }
  const r = Math.max(1, Math.ceil(3 * sigmaPx));
  const k = new Float32Array(2 * r + 1);
  let s = 0;
  for (let i = -r; i <= r; i++) s += k[i + r] = Math.exp((-i * i) / (2 * sigmaPx * sigmaPx));
  for (let i = 0; i < k.length; i++) k[i]! /= s;
  const tmp = new Float32Array(src.length);
  for (let v = 0; v < height; v++) {
    const row = v * width;
    for (let u = 0; u < width; u++) {
      let acc = 0;
      if (u >= r && u < width - r) {
        const base = row + u - r;
        for (let i = 0; i <= 2 * r; i++) acc += k[i]! * src[base + i]!;
      } else {
        for (let i = -r; i <= r; i++) {
          const uu = u + i < 0 ? 0 : u + i >= width ? width - 1 : u + i;
          acc += k[i + r]! * src[row + uu]!;
        }
      }
      tmp[row + u] = acc;
    }
  }
  for (let v = 0; v < height; v++) {
    const interior = v >= r && v < height - r;
    for (let u = 0; u < width; u++) {
      let acc = 0;
      if (interior) {
        let idx = (v - r) * width + u;
        for (let i = 0; i <= 2 * r; i++, idx += width) acc += k[i]! * tmp[idx]!;
      } else {
        for (let i = -r; i <= r; i++) {
          const vv = v + i < 0 ? 0 : v + i >= height ? height - 1 : v + i;
          acc += k[i + r]! * tmp[vv * width + u]!;
        }
      }
      out[v * width + u] = acc;
    }
  }
  return out;
}

/**
 * Binomial blur [1 4 6 4 1]/16 along each axis (a Gaussian of sigma 1 px to
 * good approximation: the binomial's variance is 4 · 1/4 = 1), edge clamped.
 * The default smoothing of the detector; unrolled because it is the
 * detector's largest single cost.
 */
export function binomialBlur5(src: Float32Array, width: number, height: number): Float32Array {
  const tmp = new Float32Array(src.length);
  const out = new Float32Array(src.length);
  const cl = (i: number, n: number): number => (i < 0 ? 0 : i >= n ? n - 1 : i);
  for (let v = 0; v < height; v++) {
    const row = v * width;
    for (let u = 0; u < width; u++) {
      if (u >= 2 && u < width - 2) {
        const i = row + u;
        tmp[i] = (src[i - 2]! + src[i + 2]! + 4 * (src[i - 1]! + src[i + 1]!) + 6 * src[i]!) * 0.0625;
      } else {
        tmp[row + u] =
          (src[row + cl(u - 2, width)]! + src[row + cl(u + 2, width)]! + 4 * (src[row + cl(u - 1, width)]! + src[row + cl(u + 1, width)]!) + 6 * src[row + u]!) *
          0.0625;
      }
    }
  }
  const w2 = 2 * width;
  for (let v = 0; v < height; v++) {
    const row = v * width;
    if (v >= 2 && v < height - 2) {
      for (let u = 0, i = row; u < width; u++, i++) {
        out[i] = (tmp[i - w2]! + tmp[i + w2]! + 4 * (tmp[i - width]! + tmp[i + width]!) + 6 * tmp[i]!) * 0.0625;
      }
    } else {
      const a = cl(v - 2, height) * width, b = cl(v - 1, height) * width, c = cl(v + 1, height) * width, d = cl(v + 2, height) * width;
      for (let u = 0; u < width; u++) out[row + u] = (tmp[a + u]! + tmp[d + u]! + 4 * (tmp[b + u]! + tmp[c + u]!) + 6 * tmp[row + u]!) * 0.0625;
    }
  }
  return out;
}

/** ChESS response R at every pixel (0 within RING_RADIUS + 1 of the border). */
export function chessResponse(img: Float32Array, width: number, height: number): Float32Array {
  const R = new Float32Array(width * height);
  const off = new Int32Array(16);
  for (let k = 0; k < 16; k++) off[k] = RING[k]![1] * width + RING[k]![0];
  const m = RING_RADIUS + 1;
  const o0 = off[0]!, o1 = off[1]!, o2 = off[2]!, o3 = off[3]!, o4 = off[4]!, o5 = off[5]!, o6 = off[6]!, o7 = off[7]!;
  const o8 = off[8]!, o9 = off[9]!, o10 = off[10]!, o11 = off[11]!, o12 = off[12]!, o13 = off[13]!, o14 = off[14]!, o15 = off[15]!;
  for (let v = m; v < height - m; v++) {
    for (let u = m, i = v * width + m; u < width - m; u++, i++) {
      const i0 = img[i + o0]!, i1 = img[i + o1]!, i2 = img[i + o2]!, i3 = img[i + o3]!;
      const i4 = img[i + o4]!, i5 = img[i + o5]!, i6 = img[i + o6]!, i7 = img[i + o7]!;
      const i8 = img[i + o8]!, i9 = img[i + o9]!, i10 = img[i + o10]!, i11 = img[i + o11]!;
      const i12 = img[i + o12]!, i13 = img[i + o13]!, i14 = img[i + o14]!, i15 = img[i + o15]!;
      const sum =
        Math.abs(i0 + i8 - i4 - i12) + Math.abs(i1 + i9 - i5 - i13) + Math.abs(i2 + i10 - i6 - i14) + Math.abs(i3 + i11 - i7 - i15);
      const diff =
        Math.abs(i0 - i8) + Math.abs(i1 - i9) + Math.abs(i2 - i10) + Math.abs(i3 - i11) +
        Math.abs(i4 - i12) + Math.abs(i5 - i13) + Math.abs(i6 - i14) + Math.abs(i7 - i15);
      const ringMean = (i0 + i1 + i2 + i3 + i4 + i5 + i6 + i7 + i8 + i9 + i10 + i11 + i12 + i13 + i14 + i15) / 16;
      const localMean = (img[i]! + img[i - 1]! + img[i + 1]! + img[i - width]! + img[i + width]!) / 5;
      R[i] = sum - diff - 16 * Math.abs(ringMean - localMean);
    }
  }
  return R;
}

interface Candidates {
  x: Float64Array;
  y: Float64Array;
  response: Float64Array;
  count: number;
}

/** Local maxima of R in a 5x5 window above `threshold`, with parabolic sub-pixel peak positions. */
function findCandidates(R: Float32Array, width: number, height: number, threshold: number, maxCount: number): Candidates {
  const xs: number[] = [], ys: number[] = [], rs: number[] = [];
  const m = RING_RADIUS + 3;
  for (let v = m; v < height - m; v++) {
    for (let u = m, i = v * width + m; u < width - m; u++, i++) {
      const r = R[i]!;
      if (r <= threshold) continue;
      let isMax = true;
      for (let dv = -2; dv <= 2 && isMax; dv++) {
        for (let du = -2; du <= 2; du++) {
          if (du === 0 && dv === 0) continue;
          const q = R[i + dv * width + du]!;
          // Ties resolved towards the earlier pixel in scan order.
          if (q > r || (q === r && (dv < 0 || (dv === 0 && du < 0)))) {
            isMax = false;
            break;
          }
        }
      }
      if (!isMax) continue;
      const l = R[i - 1]!, rr = R[i + 1]!, t = R[i - width]!, b = R[i + width]!;
      const dx = l - 2 * r + rr < 0 ? (0.5 * (l - rr)) / (l - 2 * r + rr) : 0;
      const dy = t - 2 * r + b < 0 ? (0.5 * (t - b)) / (t - 2 * r + b) : 0;
      xs.push(u + Math.max(-0.5, Math.min(0.5, dx)));
      ys.push(v + Math.max(-0.5, Math.min(0.5, dy)));
      rs.push(r);
    }
  }
  let order = rs.map((_, k) => k).sort((a, b) => rs[b]! - rs[a]!);
  if (order.length > maxCount) order = order.slice(0, maxCount);
  const n = order.length;
  const c: Candidates = { x: new Float64Array(n), y: new Float64Array(n), response: new Float64Array(n), count: n };
  order.forEach((k, j) => {
    c.x[j] = xs[k]!;
    c.y[j] = ys[k]!;
    c.response[j] = rs[k]!;
  });
  return c;
}

/** Bucket grid over the candidates for radius queries. */
class SpatialIndex {
  private readonly cell: number;
  private readonly nx: number;
  private readonly ny: number;
  private readonly buckets: number[][];
  constructor(private readonly c: Candidates, width: number, height: number, cell = 16) {
    this.cell = cell;
    this.nx = Math.ceil(width / cell) + 1;
    this.ny = Math.ceil(height / cell) + 1;
    this.buckets = Array.from({ length: this.nx * this.ny }, () => []);
    for (let k = 0; k < c.count; k++) this.buckets[this.key(c.x[k]!, c.y[k]!)]!.push(k);
  }
  private key(x: number, y: number): number {
    const i = Math.min(this.nx - 1, Math.max(0, Math.floor(x / this.cell)));
    const j = Math.min(this.ny - 1, Math.max(0, Math.floor(y / this.cell)));
    return j * this.nx + i;
  }
  /** Nearest candidate to (x, y) within `radius` that `accept` allows, or −1. */
  nearest(x: number, y: number, radius: number, accept?: (k: number) => boolean): number {
    const i0 = Math.max(0, Math.floor((x - radius) / this.cell)), i1 = Math.min(this.nx - 1, Math.floor((x + radius) / this.cell));
    const j0 = Math.max(0, Math.floor((y - radius) / this.cell)), j1 = Math.min(this.ny - 1, Math.floor((y + radius) / this.cell));
    let best = -1, bestD = radius * radius;
    for (let j = j0; j <= j1; j++) {
      for (let i = i0; i <= i1; i++) {
        for (const k of this.buckets[j * this.nx + i]!) {
          const d = (this.c.x[k]! - x) ** 2 + (this.c.y[k]! - y) ** 2;
          if (d <= bestD && (!accept || accept(k))) {
            bestD = d;
            best = k;
          }
        }
      }
    }
    return best;
  }
  /** The k nearest candidates within `radius` (excluding `self`), nearest first. */
  kNearest(self: number, k: number, radius: number): number[] {
    const x = this.c.x[self]!, y = this.c.y[self]!;
    const i0 = Math.max(0, Math.floor((x - radius) / this.cell)), i1 = Math.min(this.nx - 1, Math.floor((x + radius) / this.cell));
    const j0 = Math.max(0, Math.floor((y - radius) / this.cell)), j1 = Math.min(this.ny - 1, Math.floor((y + radius) / this.cell));
    const found: [number, number][] = [];
    for (let j = j0; j <= j1; j++) {
      for (let i = i0; i <= i1; i++) {
        for (const q of this.buckets[j * this.nx + i]!) {
          if (q === self) continue;
          const d = (this.c.x[q]! - x) ** 2 + (this.c.y[q]! - y) ** 2;
          if (d <= radius * radius) found.push([d, q]);
        }
      }
    }
    found.sort((a, b) => a[0] - b[0]);
    return found.slice(0, k).map((f) => f[1]);
  }
}

/** Bilinear sample with edge clamping. */
function sampleBilinear(img: Float32Array, width: number, height: number, x: number, y: number): number {
  const xc = Math.min(width - 1.001, Math.max(0, x)), yc = Math.min(height - 1.001, Math.max(0, y));
  const i = Math.floor(xc), j = Math.floor(yc);
  const fx = xc - i, fy = yc - j;
  const k = j * width + i;
  return (1 - fy) * ((1 - fx) * img[k]! + fx * img[k + 1]!) + fy * ((1 - fx) * img[k + width]! + fx * img[k + width + 1]!);
}

/** A rectangular grid of candidate indices, `g[b][a]`, a along the first axis. */
type Grid = number[][];

interface DetectContext {
  c: Candidates;
  index: SpatialIndex;
  smooth: Float32Array;
  width: number;
  height: number;
}

/**
 * Mean intensity of the cell spanned by 4 corners (p00, p10, p01, p11): the
 * centre is the intersection of the diagonals; 5 samples around it.
 */
function cellIntensity(ctx: DetectContext, k00: number, k10: number, k01: number, k11: number): number {
  const { x, y } = ctx.c;
  const cx = (x[k00]! + x[k10]! + x[k01]! + x[k11]!) / 4;
  const cy = (y[k00]! + y[k10]! + y[k01]! + y[k11]!) / 4;
  let acc = 0;
  for (const k of [k00, k10, k01, k11]) acc += sampleBilinear(ctx.smooth, ctx.width, ctx.height, cx + 0.3 * (x[k]! - cx), cy + 0.3 * (y[k]! - cy));
  return (acc + sampleBilinear(ctx.smooth, ctx.width, ctx.height, cx, cy)) / 5;
}

/**
 * Cell colour check over the whole grid. Returns the sign s (+1: cells with
 * even a+b are bright) plus contrast figures, or undefined when some pair of
 * adjacent cells does not alternate clearly.
 */
function colourCheck(ctx: DetectContext, g: Grid): { evenBright: boolean; contrast: number; score: number } | undefined {
  const nb = g.length, na = g[0]!.length;
  if (na < 2 || nb < 2) return undefined;
  const cells: number[][] = [];
  for (let b = 0; b + 1 < nb; b++) {
    const row: number[] = [];
    for (let a = 0; a + 1 < na; a++) row.push(cellIntensity(ctx, g[b]![a]!, g[b]![a + 1]!, g[b + 1]![a]!, g[b + 1]![a + 1]!));
    cells.push(row);
  }
  const diffs: number[] = []; // (even cell) − (odd cell)
  for (let b = 0; b < cells.length; b++) {
    for (let a = 0; a < cells[b]!.length; a++) {
      const sgn = (a + b) % 2 === 0 ? 1 : -1;
      if (a + 1 < cells[b]!.length) diffs.push(sgn * (cells[b]![a]! - cells[b]![a + 1]!));
      if (b + 1 < cells.length) diffs.push(sgn * (cells[b]![a]! - cells[b + 1]![a]!));
    }
  }
  // A single cell has no neighbour to alternate with (declared sizes of at
  // least 2 x 3 corners never get here with a full grid).
  if (diffs.length === 0) return undefined;
  const pos = diffs.every((d) => d > 0), neg = diffs.every((d) => d < 0);
  if (!pos && !neg) return undefined;
  const mags = diffs.map(Math.abs).sort((p, q) => p - q);
  const median = mags[Math.floor(mags.length / 2)]!;
  const min = mags[0]!;
  if (median < 6 || min < 0.2 * median) return undefined;
  return { evenBright: pos, contrast: median, score: min / median };
}

/** Tries to build a 3x3 seed grid around candidate `k`. */
function seedAt(ctx: DetectContext, k: number): Grid | undefined {
  const { c, index } = ctx;
  const x0 = c.x[k]!, y0 = c.y[k]!;
  // Grow the search radius until 12 neighbours are in reach (cheap in dense clutter).
  const limit = 0.35 * Math.max(ctx.width, ctx.height);
  let nbrs: number[] = [];
  for (let radius = 24; nbrs.length < 12; radius *= 2) {
    nbrs = index.kNearest(k, 12, Math.min(radius, limit));
    if (radius >= limit) break;
  }
  if (nbrs.length < 8) return undefined;
  // Opposite pairs (a, b) with a − c ≈ c − b.
  const pairs: { ex: number; ey: number; len: number; a: number; b: number }[] = [];
  for (let i = 0; i < nbrs.length; i++) {
    const a = nbrs[i]!;
    const vx = c.x[a]! - x0, vy = c.y[a]! - y0;
    const len = Math.hypot(vx, vy);
    for (let j = i + 1; j < nbrs.length; j++) {
      const b = nbrs[j]!;
      const wx = c.x[b]! - x0, wy = c.y[b]! - y0;
      if (Math.hypot(vx + wx, vy + wy) < 0.25 * len) pairs.push({ ex: (vx - wx) / 2, ey: (vy - wy) / 2, len: Math.hypot(vx - wx, vy - wy) / 2, a, b });
    }
  }
  if (pairs.length < 2) return undefined;
  pairs.sort((p, q) => p.len - q.len);
  for (let i = 0; i < Math.min(pairs.length, 3); i++) {
    for (let j = i + 1; j < pairs.length; j++) {
      const p = pairs[i]!, q = pairs[j]!;
      const sin = Math.abs(p.ex * q.ey - p.ey * q.ex) / (p.len * q.len);
      if (sin < 0.35 || q.len > 3 * p.len) continue;
      // Orient so that (e1, e2) is right-handed in the image; the grid axes follow.
      let e2x = q.ex, e2y = q.ey, q_plus = q.a, q_minus = q.b;
      if (p.ex * q.ey - p.ey * q.ex < 0) {
        e2x = -q.ex;
        e2y = -q.ey;
        q_plus = q.b;
        q_minus = q.a;
      }
      const tol = 0.3 * Math.min(p.len, q.len);
      const diag = (s1: number, s2: number): number => index.nearest(x0 + s1 * p.ex + s2 * e2x, y0 + s1 * p.ey + s2 * e2y, tol);
      const mm = diag(-1, -1), pm = diag(1, -1), mp = diag(-1, 1), pp = diag(1, 1);
      if (mm < 0 || pm < 0 || mp < 0 || pp < 0) continue;
      const g: Grid = [
        [mm, q_minus, pm],
        [p.b, k, p.a],
        [mp, q_plus, pp],
      ];
      if (new Set(g.flat()).size !== 9) continue;
      if (!colourCheck(ctx, g)) continue;
      return g;
    }
  }
  return undefined;
}

type Side = 'left' | 'right' | 'top' | 'bottom';

/**
 * Predicted position of the next corner beyond p1 on the line … p3, p2, p1:
 * quadratic extrapolation 3p1 − 3p2 + p3 with three points, linear 2p1 − p2
 * with two. Returns [x, y, local spacing].
 */
function extrapolate(ctx: DetectContext, line: number[]): [number, number, number] {
  const { x, y } = ctx.c;
  const n = line.length;
  const k1 = line[n - 1]!, k2 = line[n - 2]!;
  const sp = Math.hypot(x[k1]! - x[k2]!, y[k1]! - y[k2]!);
  if (n >= 3) {
    const k3 = line[n - 3]!;
    return [3 * x[k1]! - 3 * x[k2]! + x[k3]!, 3 * y[k1]! - 3 * y[k2]! + y[k3]!, sp];
  }
  return [2 * x[k1]! - x[k2]!, 2 * y[k1]! - y[k2]!, sp];
}

/** Adds one row or column on `side` if every corner of it is found. */
function growSide(ctx: DetectContext, g: Grid, used: Set<number>, side: Side): boolean {
  const nb = g.length, na = g[0]!.length;
  const lines: number[][] = [];
  if (side === 'right') for (let b = 0; b < nb; b++) lines.push(g[b]!.slice(Math.max(0, na - 3)));
  if (side === 'left') for (let b = 0; b < nb; b++) lines.push(g[b]!.slice(0, 3).reverse());
  if (side === 'bottom') for (let a = 0; a < na; a++) lines.push(g.slice(Math.max(0, nb - 3)).map((r) => r[a]!));
  if (side === 'top') for (let a = 0; a < na; a++) lines.push(g.slice(0, 3).map((r) => r[a]!).reverse());
  const added: number[] = [];
  const taken = new Set<number>();
  for (const line of lines) {
    const [px, py, sp] = extrapolate(ctx, line);
    if (px < 0 || py < 0 || px > ctx.width - 1 || py > ctx.height - 1) return false;
    const k = ctx.index.nearest(px, py, 0.3 * sp, (q) => !used.has(q) && !taken.has(q));
    if (k < 0) return false;
    added.push(k);
    taken.add(k);
  }
  for (const k of added) used.add(k);
  if (side === 'right') g.forEach((r, b) => r.push(added[b]!));
  if (side === 'left') g.forEach((r, b) => r.unshift(added[b]!));
  if (side === 'bottom') g.push(added);
  if (side === 'top') g.unshift(added);
  return true;
}

function growGrid(ctx: DetectContext, seed: Grid, maxDim: number): Grid {
  const g = seed.map((r) => r.slice());
  const used = new Set<number>(g.flat());
  const open: Record<Side, boolean> = { left: true, right: true, top: true, bottom: true };
  let progress = true;
  while (progress) {
    progress = false;
    for (const side of ['right', 'bottom', 'left', 'top'] as Side[]) {
      if (!open[side]) continue;
      const along = side === 'left' || side === 'right' ? g[0]!.length : g.length;
      if (along > maxDim) {
        open[side] = false;
        continue;
      }
      if (growSide(ctx, g, used, side)) progress = true;
      else open[side] = false;
    }
  }
  return g;
}

/**
 * Gradient-orthogonality refinement of one corner (see file header). `sigmaW`
 * is the Gaussian window's sigma in px (reduced so that the window fits in
 * the image). Returns false when the normal
 * equations degenerate or the point wanders more than `maxShift` px.
 */
export function refineCorner(img: GreyImage, x: number, y: number, sigmaW: number, maxIter: number, maxShift: number, out: Float64Array): boolean {
  const { width, height, data } = img;
  // Near the image border the window shrinks (3 sigma must fit, with one
  // pixel to spare for the moving centre) instead of failing.
  const room = Math.floor(Math.min(x, y, width - 1 - x, height - 1 - y)) - 3;
  if (room < 3) return false;
  const sigma = Math.min(sigmaW, room / 3);
  const r = Math.ceil(3 * sigma);
  let cx = x, cy = y;
  const inv2s2 = 1 / (2 * sigma * sigma);
  for (let it = 0; it < maxIter; it++) {
    const u0 = Math.round(cx), v0 = Math.round(cy);
    if (u0 - r < 1 || v0 - r < 1 || u0 + r > width - 2 || v0 + r > height - 2) return false;
    let a = 0, b = 0, c = 0, bx = 0, by = 0;
    for (let v = v0 - r; v <= v0 + r; v++) {
      const dy = v - cy;
      for (let u = u0 - r; u <= u0 + r; u++) {
        const dx = u - cx;
        const w = Math.exp(-(dx * dx + dy * dy) * inv2s2);
        const i = v * width + u;
        const gx = 0.5 * (data[i + 1]! - data[i - 1]!);
        const gy = 0.5 * (data[i + width]! - data[i - width]!);
        const gxx = w * gx * gx, gxy = w * gx * gy, gyy = w * gy * gy;
        a += gxx;
        b += gxy;
        c += gyy;
        bx += gxx * u + gxy * v;
        by += gxy * u + gyy * v;
      }
    }
    const det = a * c - b * b;
    if (!(det > 1e-12 * (a + c) * (a + c)) || a + c === 0) return false;
    const nx = (c * bx - b * by) / det;
    const ny = (a * by - b * bx) / det;
    const step = Math.hypot(nx - cx, ny - cy);
    cx = nx;
    cy = ny;
    if (Math.hypot(cx - x, cy - y) > maxShift) return false;
    if (step < 1e-3) break;
  }
  out[0] = cx;
  out[1] = cy;
  return true;
}

function median(values: number[]): number {
  const s = values.slice().sort((p, q) => p - q);
  return s[Math.floor(s.length / 2)]!;
}

/**
 * Finds a checkerboard of exactly `board.columns x board.rows` inner corners
 * and returns its corners with ids per formats.md (see the file header for
 * the orientation rule and its 180° ambiguity).
 */
export function detectCheckerboard(image: GreyImage, board: BoardSize, opts: CheckerboardOptions = {}): CheckerboardResult {
  const { columns: C, rows: Rn } = board;
  if (!Number.isInteger(C) || !Number.isInteger(Rn) || C < 2 || Rn < 2 || C * Rn < 6) {
    throw new OptionsError(
      'detect.board_size',
      `checkerboard inner_corners [${C}, ${Rn}] is not usable: need integers ≥ 2 with at least 6 corners (2 x 3)`,
    );
  }
  const { width, height } = image;
  const sigma = opts.smoothSigmaPx ?? 1;
  const smooth = sigma === 1 ? binomialBlur5(image.data, width, height) : gaussianBlur(image.data, width, height, sigma);
  const R = chessResponse(smooth, width, height);
  let maxR = 0;
  for (let i = 0; i < R.length; i++) if (R[i]! > maxR) maxR = R[i]!;
  const threshold = Math.max(opts.absoluteThreshold ?? 24, (opts.relativeThreshold ?? 0.04) * maxR);
  const c = findCandidates(R, width, height, threshold, 4 * C * Rn + 2000);
  if (c.count < C * Rn) {
    return { found: false, reason: 'no_corners', message: `only ${c.count} corner candidates, the board needs ${C * Rn}` };
  }
  const ctx: DetectContext = { c, index: new SpatialIndex(c, width, height), smooth, width, height };
  const maxDim = Math.max(C, Rn);
  const tried = new Set<number>();
  let largest: [number, number] | undefined;
  let failure: CheckerboardNotFound | undefined;
  let seeds = 0;
  for (let k = 0; k < c.count && seeds < (opts.maxSeeds ?? 40); k++) {
    if (tried.has(k)) continue;
    const seed = seedAt(ctx, k);
    if (!seed) continue;
    seeds++;
    const g = growGrid(ctx, seed, maxDim);
    for (const q of g.flat()) tried.add(q);
    const nb = g.length, na = g[0]!.length;
    if (!largest || na * nb > largest[0] * largest[1]) largest = [na, nb];
    if (!((na === C && nb === Rn) || (na === Rn && nb === C))) {
      const bigger = na * nb > C * Rn;
      failure = {
        found: false,
        reason: 'wrong_size',
        message: `found a ${na} x ${nb} grid of inner corners, expected ${C} x ${Rn}${bigger ? ' (the grid is larger than declared)' : ''}`,
      };
      continue;
    }
    const colour = colourCheck(ctx, g);
    if (!colour) {
      failure = { found: false, reason: 'colour_check', message: 'a grid of the declared size was found but its cells do not alternate dark/bright clearly' };
      continue;
    }
    const result = assignIds(ctx, g, C, Rn, colour.evenBright);
    // Sub-pixel refinement.
    const dists: number[] = [];
    const corners = result.corners;
    for (let r = 0; r < Rn; r++) {
      for (let col = 0; col < C; col++) {
        const id = r * C + col;
        if (col > 0) dists.push(Math.hypot(corners[2 * id]! - corners[2 * id - 2]!, corners[2 * id + 1]! - corners[2 * id - 1]!));
        if (r > 0) dists.push(Math.hypot(corners[2 * id]! - corners[2 * (id - C)]!, corners[2 * id + 1]! - corners[2 * (id - C) + 1]!));
      }
    }
    const spacing = median(dists);
    const refined = new Float64Array(corners.length);
    // Gradients of the smoothed image: central differences on a sharp image
    // are anisotropic (biased towards the pixel axes); the symmetric
    // smoothing does not move the saddle.
    const smoothImage: GreyImage = { width, height, data: smooth };
    const tmp = new Float64Array(2);
    let ok = true;
    for (let id = 0; id < C * Rn && ok; id++) {
      const col = id % C, r = Math.floor(id / C);
      // Window size from the distance to the nearest other edge: the shorter
      // neighbour spacing times the sine of the angle between the grid lines
      // (thin parallelograms in oblique views bring other edges closer).
      let local = Infinity;
      let eH: [number, number] | undefined, eV: [number, number] | undefined;
      for (const [dc, dr] of [[1, 0], [-1, 0], [0, 1], [0, -1]] as const) {
        const cc = col + dc, rr = r + dr;
        if (cc < 0 || cc >= C || rr < 0 || rr >= Rn) continue;
        const j = rr * C + cc;
        const e: [number, number] = [corners[2 * j]! - corners[2 * id]!, corners[2 * j + 1]! - corners[2 * id + 1]!];
        local = Math.min(local, Math.hypot(e[0], e[1]));
        if (dc !== 0) eH ??= e;
        else eV ??= e;
      }
      const sinAngle = eH && eV ? Math.abs(eH[0] * eV[1] - eH[1] * eV[0]) / (Math.hypot(...eH) * Math.hypot(...eV)) : 1;
      const reach = local * Math.max(0.3, sinAngle);
      const maxIter = opts.maxRefineIterations ?? 30;
      const x0 = corners[2 * id]!, y0 = corners[2 * id + 1]!;
      const sigmaW = Math.max(1.2, Math.min(5, 0.2 * reach));
      // A window that still reaches another edge can drag the estimate away; retry with half the window.
      if (refineCorner(smoothImage, x0, y0, sigmaW, maxIter, Math.max(2, 0.25 * reach), tmp) || refineCorner(smoothImage, x0, y0, Math.max(1, sigmaW / 2), maxIter, Math.max(2, 0.25 * reach), tmp)) {
        refined[2 * id] = tmp[0]!;
        refined[2 * id + 1] = tmp[1]!;
      } else {
        ok = false;
      }
    }
    if (!ok) {
      failure = { found: false, reason: 'no_grid', message: 'sub-pixel refinement did not converge at some corner (corner at the image border, or squares too small or too oblique)' };
      continue;
    }
    return {
      found: true,
      columns: C,
      rows: Rn,
      corners: refined,
      ambiguous180: result.ambiguity !== 'none',
      ambiguity: result.ambiguity,
      contrast: colour.contrast,
      score: colour.score,
      spacingPx: spacing,
    };
  }
  if (failure) return largest ? { ...failure, largestGrid: largest } : failure;
  return { found: false, reason: 'no_grid', message: `no checkerboard grid among ${c.count} corner candidates` };
}

/**
 * Chooses the labeling of grid g (g[b][a]) as board (column, row) following
 * the orientation rules in the file header. Returns the corner positions per
 * id and the remaining ambiguity.
 */
function assignIds(
  ctx: DetectContext,
  g: Grid,
  C: number,
  Rn: number,
  evenBright: boolean,
): { corners: Float64Array; ambiguity: CheckerboardAmbiguity } {
  const nb = g.length, na = g[0]!.length;
  const { x, y } = ctx.c;
  // Candidate labelings: (col, row) → (a, b).
  type Map = (col: number, row: number) => [number, number];
  const maps: Map[] = [];
  for (const transpose of [false, true]) {
    const dimA = transpose ? Rn : C;
    const dimB = transpose ? C : Rn;
    if (dimA !== na || dimB !== nb) continue;
    for (const fa of [false, true]) {
      for (const fb of [false, true]) {
        maps.push((col, row) => {
          let a = transpose ? row : col;
          let b = transpose ? col : row;
          if (fa) a = na - 1 - a;
          if (fb) b = nb - 1 - b;
          return [a, b];
        });
      }
    }
  }
  const P = (m: Map, col: number, row: number): [number, number] => {
    const [a, b] = m(col, row);
    const k = g[b]![a]!;
    return [x[k]!, y[k]!];
  };
  const valid: { m: Map; xDirU: number }[] = [];
  const handed: { m: Map; xDirU: number }[] = [];
  for (const m of maps) {
    const p0 = P(m, 0, 0), px = P(m, C - 1, 0), py = P(m, 0, Rn - 1);
    const dx = [px[0] - p0[0], px[1] - p0[1]], dy = [py[0] - p0[0], py[1] - p0[1]];
    if (dx[0]! * dy[1]! - dx[1]! * dy[0]! <= 0) continue;
    // Cell (0, 0) of the board spans corners (0,0),(1,0),(0,1),(1,1): its
    // detected index is the smaller a and b of those corners.
    const [a0, b0] = m(0, 0), [a1, b1] = m(1, 1);
    const parityEven = (Math.min(a0, a1) + Math.min(b0, b1)) % 2 === 0;
    const cellBlack = parityEven ? !evenBright : evenBright;
    handed.push({ m, xDirU: dx[0]! / Math.hypot(dx[0]!, dx[1]!) });
    if (cellBlack) valid.push(handed[handed.length - 1]!);
  }
  // A board printed with inverted colours (white squares outside its corners)
  // satisfies no labeling when columns + rows is even; all the handedness-
  // preserving ones are then equally admissible and the ambiguity says so.
  // (When columns + rows is odd one of them always satisfies the colour rule.)
  if (valid.length === 0) valid.push(...handed);
  // Of the four axis flips of a grid exactly two keep the handedness, so `valid` is never empty here.
  valid.sort((p, q) => q.xDirU - p.xDirU);
  const m = valid[0]!.m;
  const corners = new Float64Array(2 * C * Rn);
  for (let row = 0; row < Rn; row++) {
    for (let col = 0; col < C; col++) {
      const [u, v] = P(m, col, row);
      corners[2 * (row * C + col)] = u;
      corners[2 * (row * C + col) + 1] = v;
    }
  }
  const ambiguity: CheckerboardAmbiguity = valid.length === 1 ? 'none' : valid.length === 2 ? 'rot180' : 'rot90';
  return { corners, ambiguity };
}
