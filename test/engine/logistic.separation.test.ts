/**
 * Two-class fits on separated classes. When a direction separates the classes, the unpenalized
 * log-likelihood has no maximum (its coefficients run to infinity; complete and quasi-complete
 * separation, Albert & Anderson 1984, Biometrika 71(1), from memory); with a penalty every
 * strength has a finite solution, but the coefficients grow like log(1/λ) as λ falls. The engine
 * must finish quickly, report nothing non-finite, and end the full-data path once the fit explains
 * all but 1e-5 of the null deviance (engine/logistic.ts, "saturated": a rule of our own).
 */
import { InputError } from "../../engine/errors";
import { fit, FitOptions, FitResult } from "../../engine/fit";
import { checkLogisticKkt } from "../helpers/logisticKkt";
import { TestRandom } from "../helpers/random";

// A hang guard, not a timing test: converged (asserted beside it) says no strength ran to its
// sweep cap; measured here these fits take 0.1–0.6 s, and a shared CI machine can be 10× slower.
const SECONDS = 20;

/** Every number in a result, nested anywhere. */
function numbers(value: unknown, out: number[] = []): number[] {
  if (typeof value === "number") out.push(value);
  else if (Array.isArray(value)) for (const v of value) numbers(v, out);
  else if (value && typeof value === "object") for (const v of Object.values(value)) numbers(v, out);
  return out;
}

function timed(run: () => FitResult): { result: FitResult; seconds: number } {
  const start = performance.now();
  const result = run();
  const seconds = (performance.now() - start) / 1000;
  if (process.env.SEPARATION_REPORT) console.log(`${expect.getState().currentTestName}: ${seconds.toFixed(2)} s`);
  return { result, seconds };
}

/** Two clusters of 50 rows each, their centres ±gap apart on x1 (spread 0.5); x2, x3 noise, x3 offset. */
function clusters(gap: number): { x: number[][]; y: number[] } {
  const random = new TestRandom(9);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < 100; i++) {
    const cls = i % 2;
    y.push(cls);
    x.push([(cls ? gap : -gap) + 0.5 * random.normal(), random.normal(), 10 + random.normal()]);
  }
  return { x, y };
}

/**
 * Quasi-complete separation: x1 < 0 only non-events, x1 > 0 only events, and 6 rows at x1 = 0
 * exactly, of both classes. x1's coefficient has no finite maximum-likelihood value, yet the rows
 * at 0 keep the deviance away from 0.
 */
function quasiSeparated(): { x: number[][]; y: number[] } {
  const random = new TestRandom(12);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < 90; i++) {
    const cls = i % 2;
    y.push(cls);
    x.push([(cls ? 1 : -1) * (0.2 + Math.abs(random.normal())), random.normal()]);
  }
  for (let i = 0; i < 6; i++) {
    y.push(i % 2);
    x.push([0, random.normal()]);
  }
  return { x, y };
}

function expectFinite(result: FitResult): void {
  for (const v of numbers(result)) expect(Number.isFinite(v)).toBe(true);
}

describe("separated classes", () => {
  test.each(["auto", "residual"] as const)("complete separation (%s updates): quick, finite, and the path stops saturated with a warning", (updates) => {
    const { x, y } = clusters(6);
    const { result, seconds } = timed(() => fit(x, y, { outcome: "two-class", updates }));
    expect(seconds).toBeLessThan(SECONDS);
    expectFinite(result);
    expect(result.diagnostics.converged).toBe(true);
    expect(result.diagnostics.earlyStop?.reason).toBe("saturated");
    expect(result.path.strengths.length).toBeLessThan(result.diagnostics.strengthCount);
    const warning = result.warnings.find((w) => w.code === "early-stop");
    expect(warning?.message).toMatch(/^the training rows are separated: from strength \S+ down the model explains all but 1e-5 of the deviance, reproducing the two classes almost exactly, so the path stops there/);
    // The rule as documented: at the last point the deviance left is at most 1e-5 of the null deviance; not before.
    const last = result.path.r2.length - 1;
    expect(result.path.r2[last]).toBeGreaterThanOrEqual(1 - 1e-5);
    expect(result.path.r2[last - 1]).toBeLessThan(1 - 1e-5);
    expect(result.classFit?.auc).toBe(1);
  });

  test("complete separation with a penalty-free term that does not separate", () => {
    const { x, y } = clusters(6);
    const options: FitOptions = { outcome: "two-class", penaltyMultipliers: [1, 0, 1], mixes: [0, 0.5, 1] };
    const { result, seconds } = timed(() => fit(x, y, options));
    expect(seconds).toBeLessThan(SECONDS);
    expectFinite(result);
    expect(result.diagnostics.converged).toBe(true);
    expect(result.diagnostics.earlyStop?.reason).toBe("saturated");
  });

  test("quasi-complete separation: no saturation, every point converged and optimal", () => {
    const { x, y } = quasiSeparated();
    for (const mix of [0, 0.5, 1]) {
      const { result, seconds } = timed(() => fit(x, y, { outcome: "two-class", mixes: [mix] }));
      expect(seconds).toBeLessThan(SECONDS);
      expectFinite(result);
      expect(result.diagnostics.converged).toBe(true);
      expect(result.diagnostics.earlyStop).toBeNull();
      // x1's coefficient grows as the penalty weakens (the separating direction).
      const first = result.path.coefficients[1][0];
      const last = result.path.coefficients[result.path.coefficients.length - 1][0];
      expect(last).toBeGreaterThan(first);
      for (let k = 0; k < result.path.strengths.length; k += 10) {
        const report = checkLogisticKkt({ x, y, intercept: result.path.intercepts[k], coefficients: result.path.coefficients[k], lambda: result.path.strengths[k], alpha: mix });
        expect(report.max).toBeLessThanOrEqual(1e-7); // Friedman et al. 2010 §3 conditions
      }
    }
  });

  test("more predictors than rows (always separable): quick and finite", () => {
    const random = new TestRandom(5);
    const x = Array.from({ length: 30 }, () => Array.from({ length: 80 }, () => random.normal()));
    const y = x.map((row) => (row[0] + row[1] > 0 ? 1 : 0));
    const { result, seconds } = timed(() => fit(x, y, { outcome: "two-class" }));
    expect(seconds).toBeLessThan(SECONDS);
    expectFinite(result);
    expect(result.diagnostics.converged).toBe(true);
  });

  test("a fixed weak strength on separated data is solved, with a warning that the rows are separated", () => {
    const { x, y } = clusters(6);
    for (const strength of [1e-6, 1e-8, 1e-14]) {
      const { result, seconds } = timed(() => fit(x, y, { outcome: "two-class", mixes: [0.5], strength }));
      expect(seconds).toBeLessThan(SECONDS);
      expectFinite(result);
      // At 1e-14 the optimality test sits on the rounding of the sums (logistic.ts ROUNDING_ALLOWANCE).
      if (strength >= 1e-8) expect(result.diagnostics.converged).toBe(true);
      // Saturated (deviance left at most 1e-5 of the null deviance) only at the weaker strengths.
      const warning = result.warnings.find((w) => w.code === "separated")?.message;
      if (strength <= 1e-8) expect(warning).toMatch(/^the training rows are separated: at strength \S+ the model explains all but 1e-5 of the deviance/);
      else expect(warning).toBeUndefined();
      expect(result.path.r2[result.path.r2.length - 1] >= 1 - 1e-5).toBe(warning !== undefined);
      // The independent check recomputes η from the data-units model (coefficients near 10², values
      // offset by 10): its own rounding, ~1e-16·|η|, is far above λ·1e-7 at λ = 1e-14, so it is
      // made at the two larger strengths only; the engine's own figure covers all three.
      expect(result.diagnostics.maxKktViolation).toBeLessThanOrEqual(1e-7);
      if (strength >= 1e-8) {
        const report = checkLogisticKkt({ x, y, intercept: result.intercept, coefficients: result.coefficients, lambda: strength, alpha: 0.5 });
        expect(report.max).toBeLessThanOrEqual(1e-7);
      }
    }
  });

  test("unpenalized terms that separate the classes by themselves are refused with a message", () => {
    const { x, y } = clusters(6);
    let caught: unknown = null;
    try {
      fit(x, y, { outcome: "two-class", penaltyMultipliers: [0, 1, 1] });
    } catch (error) {
      caught = error;
    }
    expect(caught).toBeInstanceOf(InputError);
    expect((caught as InputError).code).toBe("constant-target");
    expect((caught as InputError).message).toMatch(/the intercept and the unpenalized predictors \('x1'\) already separate the two classes.*give them a penalty multiplier above 0/);
  });
});
