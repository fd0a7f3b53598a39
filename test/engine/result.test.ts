/**
 * Fields of the result object that other parts of the add-in rely on.
 */
import { fit } from "../../engine/fit";

test("predictorSpreads are the population SDs (divisor n) and standardized = coefficient × spread", () => {
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < 40; i++) {
    const a = Math.sin(i) * 3 + 10;
    const b = Math.cos(1.7 * i) * 0.5;
    x.push([a, b, 7]);
    y.push(2 * a - 4 * b + 0.2 * Math.sin(11 * i));
  }
  const result = fit(x, y, { mixes: [0.5], folds: 4 });
  for (let j = 0; j < 2; j++) {
    const column = x.map((row) => row[j]);
    const mean = column.reduce((s, v) => s + v, 0) / column.length;
    // population SD, divisor n (the engine's documented convention; common practice for standardizing)
    const sd = Math.sqrt(column.reduce((s, v) => s + (v - mean) ** 2, 0) / column.length);
    expect(Math.abs(result.predictorSpreads[j] - sd) / sd).toBeLessThan(1e-12);
    expect(result.standardizedCoefficients[j]).toBe(result.coefficients[j] * result.predictorSpreads[j]);
  }
  expect(result.predictorSpreads[2]).toBe(0); // constant column
});
