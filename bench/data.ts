/**
 * The benchmarks' synthetic data (shared by bench/run.ts, bench/assurance.ts and bench/stability.ts):
 * AR(1)-correlated normal predictors with a sparse truth, and a yes/no outcome drawn from the same signal.
 */
import { ColumnMatrix, zeroMatrix } from "../engine/matrix";
import { mulberry32 } from "../engine/random";

/** Standard normal deviates by the Box–Muller transform over Mulberry32. */
export function normalSource(seed: number): () => number {
  const uniform = mulberry32(seed);
  return () => {
    const u = Math.max(uniform(), 1e-300);
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * uniform());
  };
}

/**
 * AR(1)-correlated predictors (corr(x_j, x_k) = 0.6^|j−k|), ten true nonzero coefficients,
 * noise giving a signal-to-noise ratio near 3.
 */
export function makeData(n: number, p: number, seed: number): { x: ColumnMatrix; y: Float64Array } {
  const normal = normalSource(seed);
  const x = zeroMatrix(n, p);
  const rho = 0.6;
  const scale = Math.sqrt(1 - rho * rho);
  for (let i = 0; i < n; i++) {
    let previous = normal();
    x.data[i] = previous;
    for (let j = 1; j < p; j++) {
      previous = rho * previous + scale * normal();
      x.data[j * n + i] = previous;
    }
  }
  const truth = new Float64Array(p);
  for (let t = 0; t < Math.min(10, p); t++) truth[Math.floor((t * p) / 10)] = t % 2 === 0 ? 1.5 : -1;
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 2;
    for (let j = 0; j < p; j++) if (truth[j] !== 0) s += truth[j] * x.data[j * n + i];
    y[i] = s + 1.5 * normal();
  }
  return { x, y };
}

/**
 * A yes/no outcome on the same predictors: y = 1 with probability logistic(η), η the numeric
 * case's noiseless signal scaled to a spread of about 2 log-odds units and centred near a 30%
 * event share.
 */
export function makeTwoClass(x: ColumnMatrix, y: Float64Array, seed: number): Float64Array {
  const n = x.rows;
  const uniform = mulberry32(seed);
  let mean = 0;
  for (let i = 0; i < n; i++) mean += y[i] / n;
  let spread = 0;
  for (let i = 0; i < n; i++) spread += (y[i] - mean) ** 2 / n;
  const scale = 2 / Math.sqrt(spread);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const eta = -0.85 + scale * (y[i] - mean);
    out[i] = uniform() < 1 / (1 + Math.exp(-eta)) ? 1 : 0;
  }
  return out;
}
