/**
 * engine/portableMath.ts: exp and log from the four basic operations. Checked against the host's
 * Math.exp and Math.log (a general-purpose implementation computing them another way) to a few
 * units in the last place, plus the identities they must keep exactly.
 */
import fc from "fast-check";
import { hypotenuse, portableExp, portableLog } from "../../engine/portableMath";

/** A few units in the last place of a double (2^-52 ≈ 2.2e-16 relative), allowing for both sides' rounding. */
const ULPS = 4 * Number.EPSILON;

function relative(actual: number, expected: number): number {
  return Math.abs(actual - expected) / Math.abs(expected);
}

describe("portableExp", () => {
  test("agrees with Math.exp to a few ulp across the whole finite range (property)", () => {
    fc.assert(
      fc.property(fc.double({ min: -700, max: 700, noNaN: true }), (x) => {
        expect(relative(portableExp(x), Math.exp(x))).toBeLessThanOrEqual(ULPS); // Math.exp, another implementation
      }),
      { numRuns: 5000, seed: 11 },
    );
    for (const x of [1e-300, -1e-300, 1e-10, 0.5, -0.5, 0.34657359, Math.LN2 / 2, 1, -1, 2.302585092994046, -11.512925464970229]) {
      expect([x, relative(portableExp(x), Math.exp(x)) <= ULPS]).toEqual([x, true]);
    }
  });

  test("exact where the answer is: e^0 = 1; overflow, underflow and NaN", () => {
    expect(portableExp(0)).toBe(1);
    expect(portableExp(-0)).toBe(1);
    expect(portableExp(710)).toBe(Infinity);
    expect(portableExp(Infinity)).toBe(Infinity);
    expect(portableExp(-746)).toBe(0);
    expect(portableExp(-Infinity)).toBe(0);
    expect(portableExp(NaN)).toBeNaN();
    // near the ends of the range the value is still finite and positive (IEEE 754 range, common practice)
    expect(relative(portableExp(709.7), Math.exp(709.7))).toBeLessThanOrEqual(ULPS);
    expect(portableExp(-744)).toBeGreaterThan(0);
  });
});

describe("portableLog", () => {
  test("agrees with Math.log to a few ulp from subnormals to the largest double (property)", () => {
    fc.assert(
      fc.property(fc.double({ min: Number.MIN_VALUE, max: Number.MAX_VALUE, noNaN: true }), (x) => {
        const expected = Math.log(x);
        // Near x = 1 the logarithm is near 0: compare on the scale of x − 1 there (common practice).
        const scale = Math.max(Math.abs(expected), Math.abs(x - 1) / 2);
        expect(Math.abs(portableLog(x) - expected) / scale).toBeLessThanOrEqual(ULPS); // Math.log, another implementation
      }),
      { numRuns: 5000, seed: 12 },
    );
  });

  test("exact where the answer is: log 1 = 0; powers of two are k·ln 2 to rounding; edge values", () => {
    expect(portableLog(1)).toBe(0);
    for (const k of [-1074, -1022, -3, 1, 10, 1023]) expect([k, relative(portableLog(2 ** k), k * Math.LN2) <= Number.EPSILON]).toEqual([k, true]);
    expect(portableLog(0)).toBe(-Infinity);
    expect(portableLog(Infinity)).toBe(Infinity);
    expect(portableLog(-1)).toBeNaN();
    expect(portableLog(NaN)).toBeNaN();
  });

  test("log and exp invert each other to a few ulp (property)", () => {
    fc.assert(
      fc.property(fc.double({ min: 1e-300, max: 1e300, noNaN: true }), (x) => {
        expect(relative(portableExp(portableLog(x)), x)).toBeLessThanOrEqual(ULPS * Math.max(1, Math.abs(Math.log(x)))); // e^(log x) = x; the log's rounding grows with |log x|
      }),
      { numRuns: 2000, seed: 13 },
    );
  });
});

describe("hypotenuse", () => {
  test("√(a² + b²) to a few ulp, without overflow or underflow", () => {
    expect(hypotenuse(3, 4)).toBe(5); // 3-4-5 (definition)
    expect(relative(hypotenuse(3e200, 4e200), 5e200)).toBeLessThanOrEqual(ULPS); // no overflow (definition)
    expect(relative(hypotenuse(3e-200, 4e-200), 5e-200)).toBeLessThanOrEqual(ULPS); // no underflow (definition)
    expect(hypotenuse(0, 0)).toBe(0);
    fc.assert(
      fc.property(fc.double({ min: -1e150, max: 1e150, noNaN: true }), fc.double({ min: -1e150, max: 1e150, noNaN: true }), (a, b) => {
        const expected = Math.sqrt(a * a + b * b); // the definition, exact enough where the squares stay normal
        if (a * a + b * b < 1e-290) return;
        expect(relative(hypotenuse(a, b), expected)).toBeLessThanOrEqual(ULPS);
      }),
      { numRuns: 1000, seed: 14 },
    );
  });
});
