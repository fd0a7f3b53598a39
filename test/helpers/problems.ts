/**
 * Generated regression problems with correlated predictors and a sparse true coefficient vector.
 * Designs (common practice in simulation studies of penalized regression):
 * - "equicorrelated": every pair of predictors has correlation ρ (one shared factor);
 * - "ar1": corr(x_j, x_k) = ρ^|j−k| (first-order autoregressive across columns).
 * Columns then get their own offset and scale, so standardization has work to do.
 */
import { TestRandom } from "./random";

export type Design = "equicorrelated" | "ar1";

export interface ProblemSpec {
  seed: number;
  rows: number;
  columns: number;
  design: Design;
  /** Correlation parameter ρ in [0, 1). */
  rho: number;
  /** Number of nonzero true coefficients. */
  nonzero: number;
  /** Noise standard deviation. */
  noise: number;
  /** Give the columns different offsets and scales (default true). */
  rescale?: boolean;
}

export interface Problem {
  /** Rows of predictors, x[i][j]. */
  x: number[][];
  y: number[];
  /** True coefficients in the generated (original) units. */
  beta: number[];
}

export function makeProblem(spec: ProblemSpec): Problem {
  const random = new TestRandom(spec.seed);
  const { rows: n, columns: p, rho } = spec;
  const rescale = spec.rescale ?? true;
  const offsets = Array.from({ length: p }, () => (rescale ? 20 * random.uniform() - 10 : 0));
  const scales = Array.from({ length: p }, () => (rescale ? Math.exp(3 * random.uniform() - 1.5) : 1));
  const x: number[][] = [];
  for (let i = 0; i < n; i++) {
    const row = new Array<number>(p);
    if (spec.design === "equicorrelated") {
      const shared = random.normal();
      for (let j = 0; j < p; j++) row[j] = Math.sqrt(rho) * shared + Math.sqrt(1 - rho) * random.normal();
    } else {
      row[0] = random.normal();
      for (let j = 1; j < p; j++) row[j] = rho * row[j - 1] + Math.sqrt(1 - rho * rho) * random.normal();
    }
    for (let j = 0; j < p; j++) row[j] = offsets[j] + scales[j] * row[j];
    x.push(row);
  }
  // Sparse truth: `nonzero` coefficients at random positions, sizes 0.5..2 on the standardized scale.
  const beta = new Array<number>(p).fill(0);
  const positions = random.permutation(p).slice(0, Math.min(spec.nonzero, p));
  for (const j of positions) beta[j] = ((random.uniform() < 0.5 ? -1 : 1) * (0.5 + 1.5 * random.uniform())) / scales[j];
  const y = x.map((row) => {
    let s = 3;
    for (let j = 0; j < p; j++) s += beta[j] * (row[j] - offsets[j]);
    return s + spec.noise * random.normal();
  });
  return { x, y, beta };
}
