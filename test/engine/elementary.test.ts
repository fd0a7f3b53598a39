/**
 * engine/elementary.ts: exp, log and the hypotenuse from basic arithmetic, the same bits in every
 * JavaScript engine. References: the engine's own Math.exp / Math.log (a general-purpose
 * implementation, itself within about one unit in the last place, so the two may differ by up to
 * two units), exact values (log 1 = 0, exp 0 = 1, log 2^k = k·ln 2 to one unit: from memory, the
 * definition), and round trips.
 */
import fc from "fast-check";
import { hypotenuse, portableExp, portableLog } from "../../engine/elementary";
import { strengthGrid } from "../../engine/path";

/** Units in the last place between a and b, counted at b's magnitude. */
function ulps(a: number, b: number): number {
  const spacing = 2 ** (Math.floor(Math.log2(Math.abs(b))) - 52);
  return Math.abs(a - b) / spacing;
}

test("portableExp agrees with Math.exp to 2 units in the last place (property over the normal range)", () => {
  fc.assert(
    fc.property(fc.double({ min: -700, max: 700, noNaN: true }), (x) => {
      expect(ulps(portableExp(x), Math.exp(x))).toBeLessThanOrEqual(2); // Math.exp, another implementation
    }),
    { numRuns: 2000, seed: 11 },
  );
});

test("portableLog agrees with Math.log to 2 units in the last place (property over positive doubles)", () => {
  fc.assert(
    fc.property(fc.double({ min: 1e-300, max: 1e300, noNaN: true }), (x) => {
      const expected = Math.log(x);
      if (expected === 0) expect(portableLog(x)).toBe(0);
      else expect(ulps(portableLog(x), expected)).toBeLessThanOrEqual(2); // Math.log, another implementation
    }),
    { numRuns: 2000, seed: 12 },
  );
});

test("exact and special values", () => {
  expect(portableLog(1)).toBe(0); // log 1 = 0 (definition)
  expect(portableExp(0)).toBe(1); // exp 0 = 1 (definition)
  for (const k of [-1000, -52, -1, 1, 10, 1000]) expect(ulps(portableLog(2 ** k), k * Math.LN2)).toBeLessThanOrEqual(1); // log 2^k = k ln 2 (definition)
  expect(portableLog(0)).toBe(-Infinity);
  expect(portableLog(-1)).toBeNaN();
  expect(portableLog(Infinity)).toBe(Infinity);
  expect(portableExp(800)).toBe(Infinity);
  expect(portableExp(-800)).toBe(0);
  expect(portableLog(5e-324)).toBeCloseTo(-744.44007192138126, 12); // log of the smallest subnormal (from memory)
  expect(ulps(hypotenuse(3e200, 4e200), 5e200)).toBeLessThanOrEqual(1); // no overflow; 3-4-5 (definition)
  expect(hypotenuse(0, 0)).toBe(0);
});

test("round trip: portableExp(portableLog(x)) returns x, to the digits log x can hold", () => {
  fc.assert(
    fc.property(fc.double({ min: 1e-200, max: 1e200, noNaN: true }), (x) => {
      // exp∘log = id; rounding log x to a double moves x by up to |log x|·2^-53 relative: 2|log x| units of x
      expect(ulps(portableExp(portableLog(x)), x)).toBeLessThanOrEqual(2 + 2 * Math.abs(portableLog(x)));
    }),
    { numRuns: 500, seed: 13 },
  );
});

test("the strength grid is built from them: both ends exact, log-even in between", () => {
  const grid = strengthGrid(0.7, 11, 1e-3);
  expect(grid[0]).toBe(0.7);
  for (let k = 1; k < grid.length; k++) expect(ulps(grid[k] / grid[k - 1], 10 ** (-3 / 10))).toBeLessThanOrEqual(8); // log-spaced (common practice)
});
