/**
 * engine/metrics.ts: MAE, RMSE, R² and mean error, checked against hand computations, and
 * scale-safe: values near 1e200 or 1e-200 (whose squares overflow or underflow a double) score
 * like the same values near 1.
 */
import fc from "fast-check";
import { score } from "../../engine/metrics";
import { expectRelative } from "../helpers/numeric";

describe("score", () => {
  test("ordinary values: the textbook formulas, bit for bit", () => {
    const actual = [3, 5, 2, 8];
    const predicted = [2.5, 5.5, 2, 7];
    const s = score(actual, predicted);
    // Direct evaluation of the definitions (common practice), in the same order of operations.
    expect(s.mae).toBe((0.5 + 0.5 + 0 + 1) / 4);
    expect(s.rmse).toBe(Math.sqrt((0.25 + 0.25 + 0 + 1) / 4));
    expect(s.r2).toBe(1 - 1.5 / 21); // total sum of squares about the mean 4.5 is 21, by hand
    expect(s.bias).toBe((-0.5 + 0.5 + 0 - 1) / 4);
    expect(s.count).toBe(4);
  });

  test("values near 1e200: finite RMSE and R² (by hand: errors ±0.1e200, total sum of squares 5e400)", () => {
    const s = score([1e200, 2e200, 3e200, 4e200], [1.1e200, 2e200, 2.9e200, 4e200]);
    expectRelative(s.mae, 0.05e200, 1e-14, "MAE = 0.2e200 / 4, by hand (common practice)");
    expectRelative(s.rmse, Math.sqrt(0.005) * 1e200, 1e-14, "RMSE = sqrt(0.02e400 / 4), by hand (common practice)");
    expectRelative(s.r2, 1 - 0.02 / 5, 1e-14, "R² = 1 − 0.02/5, by hand (common practice)");
    expect(Math.abs(s.bias)).toBeLessThanOrEqual(1e-14 * 4e200); // +0.1 and −0.1 cancel, by hand
  });

  test("weights near 1e308 (their sum overflows) weigh like the same weights near 1 (weighted measures are ratios)", () => {
    const actual = [1, 2, 3, 5];
    const predicted = [1.5, 2, 2.5, 6];
    const plain = score(actual, predicted, [1, 2, 1, 0.5]);
    const heavy = score(actual, predicted, [0.5e308, 1e308, 0.5e308, 0.25e308]);
    // Scaling every weight by one factor leaves Σw·loss / Σw unchanged (common practice).
    expectRelative(heavy.mae, plain.mae, 1e-14, "weighted MAE, weights × 0.5e308");
    expectRelative(heavy.rmse, plain.rmse, 1e-14, "weighted RMSE, weights × 0.5e308");
    expectRelative(heavy.r2, plain.r2, 1e-14, "weighted R², weights × 0.5e308");
    expectRelative(heavy.bias, plain.bias, 1e-14, "weighted mean error, weights × 0.5e308");
  });

  test("property: scores of (actual × c, predicted × c) are c × (MAE, RMSE, mean error) and the same R², c from 1e-200 to 1e200", () => {
    const value = fc.integer({ min: -1_000_000, max: 1_000_000 }).map((k) => k / 1000);
    fc.assert(
      fc.property(
        fc.array(fc.tuple(value, value), { minLength: 2, maxLength: 40 }),
        fc.integer({ min: -200, max: 200 }),
        fc.double({ min: 1, max: 9.99, noNaN: true }),
        (pairs, exponent, mantissa) => {
          const actual = pairs.map((p) => p[0]);
          const predicted = pairs.map((p) => p[1]);
          const mean = actual.reduce((s, a) => s + a, 0) / actual.length;
          const spread = actual.reduce((s, a) => s + (a - mean) ** 2, 0);
          fc.pre(spread > 1e-3); // R² needs actual values that differ
          const c = mantissa * 10 ** exponent;
          const base = score(actual, predicted);
          const scaled = score(
            actual.map((a) => a * c),
            predicted.map((f) => f * c),
          );
          // Scale equivariance of the definitions (common practice); each a·c rounds once
          // (relative 1.1e-16), which moves the measures by far less than 1e-12 relative.
          const size = Math.max(...actual.map(Math.abs), ...predicted.map(Math.abs));
          if (base.mae > 0) expectRelative(scaled.mae, c * base.mae, 1e-12, "MAE × c");
          else expect(scaled.mae).toBe(0);
          if (base.rmse > 0) expectRelative(scaled.rmse, c * base.rmse, 1e-12, "RMSE × c");
          else expect(scaled.rmse).toBe(0);
          expect(Math.abs(scaled.bias - c * base.bias)).toBeLessThanOrEqual(1e-12 * c * size);
          expect(Math.abs(scaled.r2 - base.r2)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(base.r2)));
          expect(Number.isFinite(scaled.rmse) && Number.isFinite(scaled.r2)).toBe(true);
        },
      ),
      { numRuns: 300, seed: 8 },
    );
  });
});
