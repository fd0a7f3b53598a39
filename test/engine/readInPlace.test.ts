/**
 * Reading the predictors in place (engine/fit.ts Prepared.inPlace) against the working copy
 * (setReadInPlace(false)): two routes to the same numbers (common practice: the in-place passes
 * form x_ij × 2^e_j where they read it, the very product the copy stores), so every number of
 * the result must be the same bit for bit (Object.is: -0 and NaN count) — coefficients, path,
 * cross-validation curves, fold models, held-out residuals, diagnostics.
 *
 * Random problems over the shapes and options that take different passes: gram and residual
 * form, squared and absolute error (held-out rows gathered), positive weights (read in place)
 * and weights with zeros (copied), a fixed strength, stability selection, and columns whose
 * powers of two are large, small and subnormal-adjacent (values that lose digits when scaled:
 * the same digits either way).
 */
import { fit, FitOptions, setReadInPlace } from "../../engine/fit";
import { ColumnMatrix } from "../../engine/matrix";
import { TestRandom } from "../helpers/random";

function sameNumbers(a: unknown, b: unknown, where: string): string | null {
  if (typeof a === "number" && typeof b === "number") return Object.is(a, b) ? null : `${where}: ${a} vs ${b}`;
  if (a === null || b === null || typeof a !== "object" || typeof b !== "object") return a === b ? null : `${where}: ${String(a)} vs ${String(b)}`;
  if (ArrayBuffer.isView(a) || Array.isArray(a)) {
    const x = a as unknown as ArrayLike<unknown>;
    const y = b as unknown as ArrayLike<unknown>;
    if (x.length !== y.length) return `${where}: length ${x.length} vs ${y.length}`;
    for (let i = 0; i < x.length; i++) {
      const d = sameNumbers(x[i], y[i], `${where}[${i}]`);
      if (d) return d;
    }
    return null;
  }
  const keys = Object.keys(a as object);
  if (keys.length !== Object.keys(b as object).length) return `${where}: different fields`;
  for (const k of keys) {
    const d = sameNumbers((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${where}.${k}`);
    if (d) return d;
  }
  return null;
}

function problem(seed: number, n: number, p: number): { x: ColumnMatrix; y: Float64Array } {
  const random = new TestRandom(seed);
  const data = new Float64Array(n * p);
  for (let i = 0; i < n * p; i++) data[i] = random.normal();
  // Columns far from 1 in size: large, small, and one whose small values lose digits once scaled
  // (a column near 1e300 with entries near 1e-300 underflows to subnormals in the working units).
  const sizes = [1e12, 1e-9, 3e-300, 7];
  for (let j = 0; j < Math.min(p, sizes.length); j++) for (let i = 0; i < n; i++) data[j * n + i] *= sizes[j];
  if (p > 4) data[4 * n] = 1e300;
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) y[i] = data[4 * n + i] * 1e-300 + (p > 5 ? data[5 * n + i] : 0) - 0.5 * data[(p - 1) * n + i] + 0.3 * random.normal();
  return { x: { rows: n, columns: p, data }, y };
}

function bothWays(x: ColumnMatrix, y: Float64Array, options: FitOptions): string | null {
  const was = setReadInPlace(true);
  try {
    const inPlace = fit(x, y, options);
    setReadInPlace(false);
    const copied = fit(x, y, options);
    return sameNumbers(inPlace, copied, "result");
  } finally {
    setReadInPlace(was);
  }
}

describe("reading the predictors in place gives the working copy's results bit for bit", () => {
  const shapes: [number, number][] = [
    [60, 8],
    [200, 12],
    [30, 50],
  ];
  const variants: [string, (n: number) => FitOptions][] = [
    ["defaults", () => ({})],
    ["residual form", () => ({ updates: "residual", mixes: [0, 0.5, 1] })],
    ["gram form, absolute error", () => ({ updates: "gram", measure: "mae", mixes: [0.3, 1] })],
    ["positive weights", (n) => ({ weights: Array.from({ length: n }, (_, i) => 1 + (i % 4) * 0.25), mixes: [0, 0.7] })],
    ["weights with zeros (copied)", (n) => ({ weights: Array.from({ length: n }, (_, i) => (i % 5 === 0 ? 0 : 1)), mixes: [0.5] })],
    ["fixed strength", () => ({ mixes: [0.5], strength: 0.01 })],
    ["no intercept", () => ({ intercept: false, mixes: [1] })],
  ];
  for (const [n, p] of shapes) {
    for (const [label, make] of variants) {
      it(`${n} × ${p}, ${label}`, () => {
        for (let seed = 1; seed <= 3; seed++) {
          const { x, y } = problem(1000 * n + 10 * p + seed, n, p);
          expect(bothWays(x, y, { folds: 5, seed, ...make(n) })).toBeNull();
        }
      });
    }
  }

  it("with stability selection (its halves read the rows too)", () => {
    const { x, y } = problem(77, 80, 10);
    expect(bothWays(x, y, { folds: 4, mixes: [1], stability: { draws: 4 } })).toBeNull();
  });
});
