/**
 * engine/outcome.ts readOutcome on all-number targets, where a one-pass shortcut decides "number"
 * without keying every value. The rule it must keep (the module's own comment, setting auto): two
 * distinct values that are exactly 0 and 1 make a yes/no outcome, any other set of numbers a number
 * outcome; with setting number, numbers are always a number outcome. Checked on random targets over
 * small alphabets (so 0/1 sets, single values, repeats, -0 and NaN all occur) against that rule
 * written out here on a Set (SameValueZero: -0 and 0 are one value, as the reading's keys have it).
 */
import { readOutcome } from "../../engine/outcome";
import { mulberry32 } from "../../engine/random";

const ALPHABETS: number[][] = [[0, 1], [0], [1], [0, 1, 2], [-0, 1], [0, -0], [1, 0.5], [NaN, 0, 1], [3, 4], [0, 1, 1e12]];

function expectedKind(values: number[]): "number" | "two-class" {
  const distinct = new Set(values);
  return distinct.size === 2 && distinct.has(0) && distinct.has(1) ? "two-class" : "number";
}

test("all-number targets: auto reads exactly {0, 1} as yes/no and everything else as numbers; values kept bit for bit", () => {
  const uniform = mulberry32(11);
  let twoClass = 0;
  for (let trial = 0; trial < 400; trial++) {
    const alphabet = ALPHABETS[trial % ALPHABETS.length];
    const length = 1 + Math.floor(uniform() * 12);
    const values = Array.from({ length }, () => alphabet[Math.floor(uniform() * alphabet.length)]);
    const auto = readOutcome(values, { outcome: "auto" });
    expect(auto.kind).toBe(expectedKind(values));
    if (auto.kind === "two-class") {
      twoClass++;
      expect(Array.from(auto.values)).toEqual(values.map((v) => (v === 1 ? 1 : 0)));
    } else {
      expect(Object.is(auto.values[0], values[0]) || (Number.isNaN(auto.values[0]) && Number.isNaN(values[0]))).toBe(true);
      expect(Array.from(auto.values)).toEqual(values);
    }
    const number = readOutcome(values, { outcome: "number" });
    expect(number.kind).toBe("number");
    expect(Array.from(number.values)).toEqual(values);
  }
  expect(twoClass).toBeGreaterThan(20);
});

test("a boolean or a text among numbers still takes the general reading (its messages unchanged)", () => {
  expect(() => readOutcome([1, 2, "lots"], { outcome: "number", name: "yield" })).toThrow("'yield' holds text ('lots') among numbers");
  expect(readOutcome([true, false, true]).kind).toBe("two-class");
  expect(() => readOutcome([0, 1, 0, 2], { outcome: "two-class" })).toThrow("3 distinct values");
});
