/**
 * The strength grid and where a path ends (engine/path.ts). The grid has a density of strengths
 * per tenfold drop (or a size), log-spaced with exact ends. By default every path covers its
 * whole grid; it ends early only when its training fit is exact (EXACT_FIT_RATIO), or, when
 * asked (`stopEarly`), once a tenfold drop in strength improves the fit by less than PLATEAU_GAIN.
 * The stopping rules are checked as properties of the reported path (the residual mean square
 * is (1 − R²) × the target's variance), not against hand-picked stopping points.
 */
import fc from "fast-check";
import { fit, FitResult } from "../../engine/fit";
import {
  DEFAULT_GRID_DENSITY,
  EXACT_FIT_RATIO,
  gridDensity,
  gridSize,
  LOW_END_TALL,
  LOW_END_WIDE,
  PLATEAU_GAIN,
  PLATEAU_SPAN,
  strengthGrid,
} from "../../engine/path";
import { expectRelative } from "../helpers/numeric";
import { makeProblem } from "../helpers/problems";

const tall = makeProblem({ seed: 8, rows: 80, columns: 12, design: "ar1", rho: 0.7, nonzero: 4, noise: 0.8 });
const wide = makeProblem({ seed: 9, rows: 18, columns: 40, design: "equicorrelated", rho: 0.4, nonzero: 3, noise: 0.3 });

/** Index of the path point a tenfold drop above point k (the rule's comparison point), or -1. */
function anchorOf(strengths: readonly number[], k: number): number {
  let anchor = -1;
  for (let j = 0; j < k; j++) if (strengths[j] >= PLATEAU_SPAN * strengths[k] * (1 - 1e-9)) anchor = j;
  return anchor;
}

/** True where the no-gain rule holds at point k: (1 − R²) fell by less than PLATEAU_GAIN of itself over a tenfold drop. */
function flatAt(result: FitResult, k: number): boolean {
  const { strengths, r2 } = result.path;
  const j = anchorOf(strengths, k);
  return j >= 0 && (1 - r2[j]) - (1 - r2[k]) < PLATEAU_GAIN * (1 - r2[j]);
}

describe("by default every path covers its whole grid", () => {
  test.each([
    ["rows > predictors", tall],
    ["predictors > rows", wide],
  ])("%s: every mix's path and CV curve has one point per grid strength; no early stop", (_, problem) => {
    const result = fit(problem.x, problem.y, { folds: 4, strengthCount: 30 });
    expect(result.path.strengths).toHaveLength(30);
    expect(result.diagnostics.earlyStop).toBeNull();
    expect(result.warnings.map((w) => w.code)).not.toContain("early-stop");
    const table = (result.cv as NonNullable<FitResult["cv"]>).table;
    for (const mix of [0, 0.25, 0.5, 0.75, 1]) expect(table.filter((r) => r.mix === mix)).toHaveLength(30);
  });
});

describe("a path ends once its training fit is exact", () => {
  test("ridge with more predictors than rows, down to a very low end: ends at the first point with residual ≤ 1e-12 of the variance", () => {
    const result = fit(wide.x, wide.y, { mixes: [0], folds: 3, strengthCount: 60, lowEndRatio: 1e-12 });
    const { strengths, r2 } = result.path;
    const last = strengths.length - 1;
    expect(last).toBeLessThan(59);
    expect(result.diagnostics.earlyStop).toEqual({ index: last, strength: strengths[last], reason: "exact-fit" });
    // 1 − R² is the residual over the variance (engine/path.ts); the rule is its first crossing (definition).
    expect(1 - r2[last]).toBeLessThanOrEqual(EXACT_FIT_RATIO * (1 + 1e-3));
    expect(1 - r2[last - 1]).toBeGreaterThan(EXACT_FIT_RATIO);
    expect(result.warnings.find((w) => w.code === "early-stop")?.message).toMatch(/^the path stopped at strength .* \(point \d+ of 60\): the fit reproduces the training rows exactly there/);
    // Every fold was scored at every strength the full path computed: one CV row each, all finite.
    const table = (result.cv as NonNullable<FitResult["cv"]>).table;
    expect(table.map((r) => r.strength)).toEqual(strengths);
    for (const row of table) expect(Number.isFinite(row.error) && Number.isFinite(row.se)).toBe(true);
    // No "widen the grid" warning for an exact fit: weaker strengths can't do better.
    expect(result.warnings.map((w) => w.code)).not.toContain("grid-edge");
  });

  test("a fixed strength is always reached, exact fit or not", () => {
    const result = fit(wide.x, wide.y, { mixes: [0], strength: 1e-9, strengthCount: 60, lowEndRatio: 1e-12 });
    expect(result.path.strengths[result.path.strengths.length - 1]).toBe(1e-9);
    expect(result.diagnostics.earlyStop).toBeNull();
  });
});

describe("stop early: a tenfold drop in strength that improves the fit by less than 1% ends the path", () => {
  test.each([
    ["lasso", 1, tall],
    ["elastic net", 0.5, tall],
    ["ridge", 0, tall],
  ])("%s: the path ends at the first point where the rule holds, and nowhere before (property)", (_, mix, problem) => {
    const full = fit(problem.x, problem.y, { mixes: [mix as number], folds: 4, strengthCount: 80, lowEndRatio: 1e-6 });
    const stopped = fit(problem.x, problem.y, { mixes: [mix as number], folds: 4, strengthCount: 80, lowEndRatio: 1e-6, stopEarly: true });
    const first = full.path.strengths.findIndex((_, k) => k < 79 && flatAt(full, k));
    expect(first).toBeGreaterThan(0); // precondition: the fit does flatten out on this grid (rows > predictors)
    const last = stopped.path.strengths.length - 1;
    expect(last).toBe(first);
    expect(stopped.diagnostics.earlyStop).toEqual({ index: first, strength: full.path.strengths[first], reason: "no-gain" });
    // The computed part is the same path (the rule only cuts it short).
    expect(stopped.path.strengths).toEqual(full.path.strengths.slice(0, first + 1));
    expect(stopped.path.coefficients).toEqual(full.path.coefficients.slice(0, first + 1));
    expect(stopped.warnings.find((w) => w.code === "early-stop")?.message).toMatch(/as 'stop early' allows/);
    // The CV curve covers the computed points only, with every fold at each.
    const table = (stopped.cv as NonNullable<FitResult["cv"]>).table;
    expect(table).toHaveLength(first + 1);
    expect(table.map((r) => r.error)).toEqual((full.cv as NonNullable<FitResult["cv"]>).table.slice(0, first + 1).map((r) => r.error));
  });

  test("the rule is per tenfold drop, so a denser grid stops at (nearly) the same strength", () => {
    const coarse = fit(tall.x, tall.y, { mixes: [1], folds: 4, strengthCount: 41, lowEndRatio: 1e-6, stopEarly: true });
    const fine = fit(tall.x, tall.y, { mixes: [1], folds: 4, strengthCount: 161, lowEndRatio: 1e-6, stopEarly: true });
    const a = coarse.diagnostics.earlyStop?.strength as number;
    const b = fine.diagnostics.earlyStop?.strength as number;
    // Within one coarse grid step (10^(6/40), about 1.41): the stop depends on the fit, not the spacing (definition).
    expect(Math.abs(Math.log10(a / b))).toBeLessThanOrEqual(6 / 40 + 1e-9);
  });
});

describe("the grid: a density of strengths per tenfold drop, both ends exact", () => {
  test("gridSize = round(density × log10(1/low end)) + 1 (at least 2); strengthGrid spreads it evenly on a log scale (property)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 200 }), fc.double({ min: -9, max: -0.05, noNaN: true }), fc.double({ min: 1e-3, max: 1e6, noNaN: true }), (density, logLow, top) => {
        const lowEnd = 10 ** logLow;
        const span = Math.log10(1 / lowEnd);
        const count = gridSize(density, lowEnd);
        expect(count).toBe(Math.max(2, Math.round(density * span) + 1)); // the documented rule
        const grid = strengthGrid(top, count, lowEnd);
        expect(grid).toHaveLength(count);
        expect(grid[0]).toBe(top); // exact ends (definition)
        expect(grid[count - 1]).toBe(top * lowEnd);
        // one common ratio between neighbours (log spacing), to rounding
        const step = Math.log(lowEnd) / (count - 1);
        for (let k = 1; k < count; k++) expect(Math.abs(Math.log(grid[k] / grid[k - 1]) - step)).toBeLessThan(1e-9);
        // the realised density is within half a strength per tenfold drop of the one asked for, when the rounding kept more than one step
        if (Math.round(density * span) >= 1) expect(Math.abs(gridDensity(count, lowEnd) - density)).toBeLessThanOrEqual(0.5 / span + 1e-9);
      }),
      { numRuns: 300, seed: 20 },
    );
  });

  test("defaults: 20 per tenfold drop; the fit reports the count and density it used", () => {
    const result = fit(tall.x, tall.y, { mixes: [1], folds: 4 });
    const span = Math.log10(1 / result.diagnostics.lowEndRatio);
    expect(result.diagnostics.strengthCount).toBe(Math.round(DEFAULT_GRID_DENSITY * span) + 1);
    expectRelative(result.diagnostics.gridDensity, DEFAULT_GRID_DENSITY, 1e-12, "realised density"); // (count − 1)/log10(1/low end), whole here (definition); 1e-12 allows log10's rounding
    expect(result.path.strengths).toHaveLength(result.diagnostics.strengthCount);
    expect(result.path.strengths[result.path.strengths.length - 1]).toBe(result.path.top * result.diagnostics.lowEndRatio);
  });

  test("default low ends: 1e-5 when rows > predictors (101 strengths), 1e-2 when predictors ≥ rows (41)", () => {
    expect(fit(tall.x, tall.y, { mixes: [1], folds: 4 }).diagnostics).toMatchObject({ lowEndRatio: LOW_END_TALL, strengthCount: 101 });
    expect(fit(wide.x, wide.y, { mixes: [0], folds: 4 }).diagnostics).toMatchObject({ lowEndRatio: LOW_END_WIDE, strengthCount: 41 });
    const square = { x: tall.x.slice(0, 12), y: tall.y.slice(0, 12) }; // as many rows as predictors
    expect(fit(square.x, square.y, { mixes: [0], folds: 3 }).diagnostics.lowEndRatio).toBe(LOW_END_WIDE);
    expect([LOW_END_TALL, LOW_END_WIDE]).toEqual([1e-5, 1e-2]); // README, Method: how the defaults were chosen
  });

  test("a grid size replaces the density; the density reported is the one it gives", () => {
    const sized = fit(tall.x, tall.y, { mixes: [1], folds: 4, strengthCount: 31, lowEndRatio: 1e-3 });
    expect(sized.path.strengths).toHaveLength(31);
    expect(sized.diagnostics.gridDensity).toBe(10); // 30 steps over 3 tenfold drops (definition)
    const dense = fit(tall.x, tall.y, { mixes: [1], folds: 4, gridDensity: 7, lowEndRatio: 1e-3 });
    expect(dense.diagnostics.strengthCount).toBe(22); // 7 × 3 + 1 (definition)
  });
});
