/**
 * Progress and cancellation hooks of the long-running entry point.
 */
import { fit, fitAsync } from "../../engine/fit";
import { CancelledError } from "../../engine/errors";
import { mulberry32 } from "../../engine/random";

function data(rows: number, columns: number): { x: number[][]; y: number[] } {
  const uniform = mulberry32(42);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < rows; i++) {
    const row = Array.from({ length: columns }, () => uniform() - 0.5);
    x.push(row);
    y.push(row[0] - 2 * row[1] + 0.3 * (uniform() - 0.5));
  }
  return { x, y };
}

test("progress counts every (mix × (folds + 1)) unit once, in order", () => {
  const { x, y } = data(60, 5);
  const seen: [number, number][] = [];
  fit(x, y, { mixes: [0, 0.5, 1], folds: 4, onProgress: (done, total) => seen.push([done, total]) });
  expect(seen.length).toBe(3 * 5);
  seen.forEach(([done, total], k) => {
    expect(done).toBe(k + 1);
    expect(total).toBe(15);
  });
});

test("raising the signal stops the fit at the next checkpoint with CancelledError", () => {
  const { x, y } = data(60, 5);
  const signal = { aborted: false };
  let units = 0;
  expect(() =>
    fit(x, y, {
      mixes: [0, 0.5, 1],
      folds: 4,
      signal,
      onProgress: () => {
        units++;
        if (units === 2) signal.aborted = true;
      },
    }),
  ).toThrow(CancelledError);
  expect(units).toBe(2);
});

test("fitAsync yields between units, so a cancel raised from a timer gets through", async () => {
  const { x, y } = data(400, 30);
  const signal = { aborted: false };
  let units = 0;
  setTimeout(() => {
    signal.aborted = true;
  }, 0);
  await expect(fitAsync(x, y, { mixes: [0, 0.25, 0.5, 0.75, 1], folds: 10, signal, onProgress: () => units++ })).rejects.toThrow(CancelledError);
  expect(units).toBeLessThan(55);
});

test("fitAsync gives the same result as fit, bit for bit", async () => {
  const { x, y } = data(80, 6);
  const options = { mixes: [0.5, 1], folds: 5, seed: 9 };
  expect(JSON.stringify(await fitAsync(x, y, options))).toBe(JSON.stringify(fit(x, y, options)));
});
