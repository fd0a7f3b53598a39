/**
 * A Cholesky factor of the active-set Newton system (descent.ts newtonStep) kept from one step
 * to the next and edited as the active set changes, instead of refactorized:
 *   S = B_AA + c·M_A,  B = G̃ (gram form) or the cached column products (residual form),
 *   c = λ(1−α) fixed for the life of the factor.
 * Along a lasso path c = 0 for every strength, so one factor follows the whole path, and at one
 * strength several Newton steps share c. A column joining costs one forward substitution, O(q²);
 * one leaving costs a rank-one update of the trailing block, O(q²) (both: Golub & Van Loan,
 * Matrix Computations, 4th ed., §6.5.4 "Updating the Cholesky factorization"; the rank-one
 * update in the stable rotation form of the LINPACK routine, Dongarra et al., LINPACK Users'
 * Guide, 1979, ch. 10), against O(q³/6) for a new factorization.
 *
 * The factor keeps its own column order (insertion order); solve permutes in and out. When
 * too many columns change, c changes, or an edit meets a pivot that is not clearly positive,
 * the caller refactorizes from scratch (`rebuild`) — or, in gram form when that is cheaper,
 * solves through the problem's eigendecomposition instead (descent.ts spectralSolve).
 */
import { dotRange } from "./problem";

/**
 * B as a stored symmetric matrix: entry (a, b) for predictors a and b is
 * values[slot[a] · stride + slot[b]] (gram form: slot the identity, stride p; residual form: the
 * product cache's slots). Read in place rather than through a callback: a callback per entry
 * cost a call and, when V8 did not inline it, a boxed number per entry (measured: 9% of the
 * 1,000 × 50 bench case in the callback and a share of its 13% garbage collection).
 */
export interface StoredMatrix {
  values: Float64Array;
  stride: number;
  slot: Int32Array;
}

/** Pivots at or below this fraction of the largest diagonal count as not positive definite. */
const PIVOT_FLOOR = 1e-12;

export class ActiveFactor {
  /** Predictor at each factor position. */
  private columns: Int32Array;
  /** Factor position of each predictor, or −1. */
  private readonly position: Int32Array;
  /** L, row-major with row stride `capacity` (lower triangle). */
  private lower: Float64Array;
  private capacity = 0;
  count = 0;
  /** c = λ(1−α) of the factor, NaN when there is none. */
  shift = NaN;
  private largestDiagonal = 0;
  private readonly work: Float64Array;
  private readonly flag: Uint8Array;
  private readonly slots: Int32Array;

  constructor(p: number) {
    this.columns = new Int32Array(0);
    // One backing store for the four p-long arrays (see CoordinateDescent's constructor).
    const store = new ArrayBuffer(16 * p + p);
    this.work = new Float64Array(store, 0, p);
    this.position = new Int32Array(store, 8 * p, p).fill(-1);
    this.slots = new Int32Array(store, 12 * p, p);
    this.flag = new Uint8Array(store, 16 * p, p);
    this.lower = new Float64Array(0);
  }

  private reserve(q: number): void {
    if (q <= this.capacity) return;
    const capacity = Math.max(q, 2 * this.capacity, 16);
    const next = new Float64Array(capacity * capacity);
    for (let a = 0; a < this.count; a++) {
      for (let b = 0; b <= a; b++) next[a * capacity + b] = this.lower[a * this.capacity + b];
    }
    const columns = new Int32Array(capacity);
    columns.set(this.columns.subarray(0, this.count));
    this.lower = next;
    this.columns = columns;
    this.capacity = capacity;
  }

  /** Forgets the factor. */
  clear(): void {
    for (let a = 0; a < this.count; a++) this.position[this.columns[a]] = -1;
    this.count = 0;
    this.shift = NaN;
  }

  /**
   * Factorizes S = B_AA + shift · M_A for the listed members from scratch (in their order). False when S is not
   * numerically positive definite (the factor is then cleared).
   */
  rebuild(members: Int32Array, m: number, shift: number, multipliers: Float64Array, source: StoredMatrix): boolean {
    this.clear();
    this.reserve(m);
    const L = this.lower;
    const S = this.capacity;
    const { values, stride, slot } = source;
    let largest = 0;
    // The members' slots once, so the copy below reads B through one index rather than two.
    const slots = this.slots;
    for (let a = 0; a < m; a++) slots[a] = slot[members[a]];
    for (let a = 0; a < m; a++) {
      const j = members[a];
      const row = a * S;
      const from = slots[a] * stride;
      for (let b = 0; b < a; b++) L[row + b] = values[from + slots[b]];
      const d = values[from + slot[j]] + shift * multipliers[j];
      L[row + a] = d;
      if (d > largest) largest = d;
    }
    if (!choleskyRows(L, S, m, PIVOT_FLOOR * largest)) return false;
    for (let a = 0; a < m; a++) {
      this.columns[a] = members[a];
      this.position[members[a]] = a;
    }
    this.count = m;
    this.shift = shift;
    this.largestDiagonal = largest;
    return true;
  }

  /**
   * Edits the factor to the listed members (same shift, S's diagonal adds shift · multipliers[j]): removes the columns that left, appends
   * the ones that joined. False (factor cleared) when more than `maxEdits` columns change or an
   * appended pivot is not clearly positive; the caller then rebuilds.
   */
  update(members: Int32Array, m: number, maxEdits: number, multipliers: Float64Array, source: StoredMatrix): boolean {
    const flag = this.flag;
    let kept = 0;
    for (let a = 0; a < m; a++) {
      flag[members[a]] = 1;
      if (this.position[members[a]] >= 0) kept++;
    }
    const edits = this.count - kept + (m - kept);
    if (edits > maxEdits) {
      for (let a = 0; a < m; a++) flag[members[a]] = 0;
      this.clear();
      return false;
    }
    // Remove from the back, so earlier positions stay valid.
    for (let t = this.count - 1; t >= 0; t--) if (!flag[this.columns[t]]) this.remove(t);
    for (let a = 0; a < m; a++) flag[members[a]] = 0;
    for (let a = 0; a < m; a++) {
      const j = members[a];
      if (this.position[j] >= 0) continue;
      if (!this.append(j, this.shift * multipliers[j], source)) {
        this.clear();
        return false;
      }
    }
    return true;
  }

  /** Deletes factor position k: rows/columns shift up, the trailing block takes a rank-one update. */
  private remove(k: number): void {
    const L = this.lower;
    const S = this.capacity;
    const q = this.count;
    const x = this.work;
    for (let i = k + 1; i < q; i++) x[i] = L[i * S + k];
    // L33 L33ᵀ + x xᵀ by rotations (LINPACK dchud form).
    for (let i = k + 1; i < q; i++) {
      const d = L[i * S + i];
      const xi = x[i];
      if (xi === 0) continue;
      const r = Math.hypot(d, xi);
      const c = r / d;
      const s = xi / d;
      L[i * S + i] = r;
      for (let l = i + 1; l < q; l++) {
        const v = (L[l * S + i] + s * x[l]) / c;
        L[l * S + i] = v;
        x[l] = c * x[l] - s * v;
      }
    }
    // Drop row k and column k.
    for (let i = k + 1; i < q; i++) {
      const from = i * S;
      const to = (i - 1) * S;
      for (let b = 0; b < k; b++) L[to + b] = L[from + b];
      for (let b = k + 1; b <= i; b++) L[to + b - 1] = L[from + b];
    }
    this.position[this.columns[k]] = -1;
    for (let i = k + 1; i < q; i++) {
      const j = this.columns[i];
      this.columns[i - 1] = j;
      this.position[j] = i - 1;
    }
    this.count = q - 1;
  }

  /** Appends predictor j: its row of L by forward substitution. False if the pivot is not clearly positive. */
  private append(j: number, diagonal: number, source: StoredMatrix): boolean {
    const q = this.count;
    this.reserve(q + 1);
    const L = this.lower;
    const S = this.capacity;
    const row = q * S;
    const { values, stride, slot } = source;
    const from = slot[j] * stride;
    const columns = this.columns;
    for (let t = 0; t < q; t++) L[row + t] = values[from + slot[columns[t]]];
    for (let t = 0; t < q; t++) {
      L[row + t] = (L[row + t] - dotRange(L, row, L, t * S, t)) / L[t * S + t];
    }
    const d = values[from + slot[j]] + diagonal;
    if (d > this.largestDiagonal) this.largestDiagonal = d;
    const s = d - dotRange(L, row, L, row, q);
    if (!(s > PIVOT_FLOOR * this.largestDiagonal)) return false;
    L[row + q] = Math.sqrt(s);
    this.columns[q] = j;
    this.position[j] = q;
    this.count = q + 1;
    return true;
  }

  /** rhs (in members' order, the same set as the factor's) ← S⁻¹ rhs. */
  solve(members: Int32Array, m: number, rhs: Float64Array): void {
    const L = this.lower;
    const S = this.capacity;
    let inOrder = true;
    for (let a = 0; a < m && inOrder; a++) inOrder = this.columns[a] === members[a];
    // Members in the factor's own order (as after a rebuild): the same substitutions in rhs itself.
    const z = inOrder ? rhs : this.work;
    if (!inOrder) for (let a = 0; a < m; a++) z[this.position[members[a]]] = rhs[a];
    for (let a = 0; a < m; a++) {
      const row = a * S;
      z[a] = (z[a] - dotRange(L, row, z, 0, a)) / L[row + a];
    }
    for (let a = m - 1; a >= 0; a--) {
      let s = z[a];
      for (let k = a + 1; k < m; k++) s -= L[k * S + a] * z[k];
      z[a] = s / L[a * S + a];
    }
    if (!inOrder) for (let a = 0; a < m; a++) rhs[a] = z[this.position[members[a]]];
  }
}

/**
 * In-place Cholesky–Crout factorization (Golub & Van Loan Alg. 4.2.1) of the m × m matrix in the
 * lower triangle of L (row stride S), two rows and two columns at a time: a 2 × 2 block of
 * inner products shares each loaded entry of the two rows and of the two earlier rows b, b + 1
 * (two rows at a time, one column: 1.3–1.9× the one-row loop at m = 100–190; two columns as well:
 * a further 1.2–1.4× at m = 50–100, bench/PROFILE.md "2 × 2 blocks"). Every entry is summed exactly as
 * in the one-column loop — even and odd k in separate sums, in increasing k, the odd-length tail
 * last — so the factor is the same bit for bit.
 * False when a pivot is at or below `floor`.
 */
export function choleskyRows(L: Float64Array, S: number, m: number, floor: number): boolean {
  let a = 0;
  for (; a + 1 < m; a += 2) {
    const r0 = a * S;
    const r1 = r0 + S;
    // a is even, so the columns b < a go in pairs (b even, b + 1): one pass over k < b serves
    // both columns of both rows (each of the eight loads feeds two products), then column b is
    // finished and its new entry is column b + 1's last (odd-b tail) term.
    for (let b = 0; b < a; b += 2) {
      const rb = b * S;
      const rc = rb + S;
      let s0 = 0;
      let s1 = 0;
      let t0 = 0;
      let t1 = 0;
      let u0 = 0;
      let u1 = 0;
      let v0 = 0;
      let v1 = 0;
      for (let k = 0; k < b; k += 2) {
        const x0 = L[rb + k];
        const x1 = L[rb + k + 1];
        const y0 = L[rc + k];
        const y1 = L[rc + k + 1];
        const p0 = L[r0 + k];
        const p1 = L[r0 + k + 1];
        const q0 = L[r1 + k];
        const q1 = L[r1 + k + 1];
        s0 += p0 * x0;
        t0 += p1 * x1;
        s1 += q0 * x0;
        t1 += q1 * x1;
        u0 += p0 * y0;
        v0 += p1 * y1;
        u1 += q0 * y0;
        v1 += q1 * y1;
      }
      const d = L[rb + b];
      const e0 = (L[r0 + b] - (s0 + t0)) / d;
      const e1 = (L[r1 + b] - (s1 + t1)) / d;
      L[r0 + b] = e0;
      L[r1 + b] = e1;
      const y = L[rc + b];
      u0 += e0 * y;
      u1 += e1 * y;
      const dc = L[rc + b + 1];
      L[r0 + b + 1] = (L[r0 + b + 1] - (u0 + v0)) / dc;
      L[r1 + b + 1] = (L[r1 + b + 1] - (u1 + v1)) / dc;
    }
    const s = L[r0 + a] - dotRange(L, r0, L, r0, a);
    if (!(s > floor)) return false;
    const d0 = Math.sqrt(s);
    L[r0 + a] = d0;
    L[r1 + a] = (L[r1 + a] - dotRange(L, r1, L, r0, a)) / d0;
    const s2 = L[r1 + a + 1] - dotRange(L, r1, L, r1, a + 1);
    if (!(s2 > floor)) return false;
    L[r1 + a + 1] = Math.sqrt(s2);
  }
  if (a < m) {
    const r0 = a * S;
    for (let b = 0; b < a; b++) L[r0 + b] = (L[r0 + b] - dotRange(L, r0, L, b * S, b)) / L[b * S + b];
    const s = L[r0 + a] - dotRange(L, r0, L, r0, a);
    if (!(s > floor)) return false;
    L[r0 + a] = Math.sqrt(s);
  }
  return true;
}
