/**
 * Cross-validation of two-class fits: the three measures recomputed fold by fold outside the
 * engine's CV loop, the choices under "higher is better" for the AUC, stratified folds, and the
 * folds of number outcomes left exactly as they were.
 */
import fc from "fast-check";
import { InputError } from "../../engine/errors";
import { fit, FitOptions, FitResult } from "../../engine/fit";
import { planFolds } from "../../engine/folds";
import { sigmoid } from "../helpers/logisticKkt";
import { TestRandom } from "../helpers/random";

function twoClassData(seed: number, rows: number, columns: number): { x: number[][]; y: number[] } {
  const random = new TestRandom(seed);
  const x = Array.from({ length: rows }, () => Array.from({ length: columns }, () => random.normal()));
  const y = x.map((row) => (random.uniform() < sigmoid(1.5 * row[0] - row[1] + 0.5 * row[2] - 0.4) ? 1 : 0));
  return { x, y };
}

/** AUC as the Mann–Whitney share of (event, non-event) pairs ranked correctly, ties ½ (Hanley & McNeil 1982, Radiology 143(1)); O(n²). */
function pairwiseAuc(y: number[], score: number[]): number {
  let pairs = 0;
  let right = 0;
  for (let a = 0; a < y.length; a++) {
    if (y[a] !== 1) continue;
    for (let b = 0; b < y.length; b++) {
      if (y[b] !== 0) continue;
      pairs++;
      right += score[a] > score[b] ? 1 : score[a] === score[b] ? 0.5 : 0;
    }
  }
  return right / pairs;
}

/**
 * The cross-validated measure at one strength, recomputed outside the engine's CV loop: the same
 * stratified folds (planFolds with the classes as strata), each fold's training rows fitted at
 * that fixed strength (the penalized solution is unique, so it is the one the CV path reached),
 * its held-out rows scored here with Math.exp, and the folds averaged by held-out row count.
 * Agreement also shows that two-class fits use the stratified folds.
 */
function recompute(x: number[][], y: number[], options: FitOptions, strength: number, measure: "deviance" | "misclassified" | "auc", cutoff = 0.5): number[] {
  const folds = options.folds ?? 10;
  const plan = planFolds(x.length, null, { scheme: "random", folds, seed: options.seed ?? 1, labels: null, strata: y });
  const values: number[] = [];
  for (let k = 0; k < folds; k++) {
    const held = plan.blocks[plan.validateBlock[k]];
    const heldSet = new Set(held);
    const trainRows = x.map((_, i) => i).filter((i) => !heldSet.has(i));
    const model = fit(
      trainRows.map((i) => x[i]),
      trainRows.map((i) => y[i]),
      { outcome: "two-class", mixes: options.mixes, strength },
    );
    const scores = Array.from(held, (i) => model.intercept + x[i].reduce((s, v, j) => s + v * model.coefficients[j], 0));
    const actual = Array.from(held, (i) => y[i]);
    if (measure === "auc") values.push(pairwiseAuc(actual, scores));
    else if (measure === "deviance") {
      // Binomial deviance per row, −2 mean log-likelihood (common practice).
      values.push((-2 * actual.reduce((s, v, t) => s + Math.log(v === 1 ? sigmoid(scores[t]) : 1 - sigmoid(scores[t])), 0)) / actual.length);
    } else {
      // Misclassified: predicted event when p >= cutoff (the engine's documented rule).
      values.push(actual.filter((v, t) => (sigmoid(scores[t]) >= cutoff ? 1 : 0) !== v).length / actual.length);
    }
  }
  return values;
}

function foldMean(values: number[], x: number[][], folds: number, y: number[], seed: number): number {
  const plan = planFolds(x.length, null, { scheme: "random", folds, seed, labels: null, strata: y });
  let total = 0;
  let sum = 0;
  values.forEach((v, k) => {
    const size = plan.blocks[plan.validateBlock[k]].length;
    sum += v * size;
    total += size;
  });
  return sum / total;
}

function rowAt(result: FitResult, mix: number, strength: number): { error: number; se: number } {
  const row = result.cv?.table.find((r) => r.mix === mix && r.strength === strength);
  if (!row) throw new Error(`no table row at mix ${mix}, strength ${strength}`);
  return row;
}

describe("cross-validated measures, recomputed fold by fold", () => {
  const { x, y } = twoClassData(2, 120, 4);
  const base: FitOptions = { outcome: "two-class", mixes: [0.5], folds: 4, seed: 3, strengthCount: 12 };

  test.each([
    ["deviance", 0.5],
    ["misclassified", 0.5],
    ["misclassified", 0.3],
    ["auc", 0.5],
  ] as const)("%s (cutoff %p)", (measure, cutoff) => {
    const result = fit(x, y, { ...base, measure, cutoff });
    expect(result.cv?.measure).toBe(measure);
    for (const k of [2, 5, 8]) {
      const strength = result.path.strengths[k];
      const values = recompute(x, y, base, strength, measure, cutoff);
      const expected = foldMean(values, x, 4, y, 3);
      const { error } = rowAt(result, 0.5, strength);
      // deviance: to the fits' tolerance; a share misclassified or an AUC is a count of rows or pairs, exactly.
      if (measure === "deviance") expect(Math.abs(error - expected)).toBeLessThanOrEqual(1e-7 * expected);
      else expect(error).toBeCloseTo(expected, 12);
    }
  });

  test("the cutoff changes the share misclassified and the in-sample table", () => {
    const low = fit(x, y, { ...base, measure: "misclassified", cutoff: 0.2 });
    const high = fit(x, y, { ...base, measure: "misclassified", cutoff: 0.8 });
    expect(low.cv?.table.map((r) => r.error)).not.toEqual(high.cv?.table.map((r) => r.error));
    for (const [result, cutoff] of [
      [low, 0.2],
      [high, 0.8],
    ] as const) {
      const probabilities = x.map((row) => sigmoid(result.intercept + row.reduce((s, v, j) => s + v * result.coefficients[j], 0)));
      const caught = y.filter((v, i) => v === 1 && probabilities[i] >= cutoff).length;
      const alarms = y.filter((v, i) => v === 0 && probabilities[i] >= cutoff).length;
      expect(result.classFit?.cutoff).toBe(cutoff);
      expect(result.classFit?.eventsCaught).toBe(caught);
      expect(result.classFit?.falseAlarms).toBe(alarms);
    }
  });
});

describe("choices when higher is better (AUC)", () => {
  test("the 'lowest error' choice is the highest mean AUC, and one-SE goes toward the stronger penalty (property)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1e6 }), (seed) => {
        const { x, y } = twoClassData(seed, 90, 6);
        const result = fit(x, y, { outcome: "two-class", measure: "auc", mixes: [0.2, 1], folds: 5, strengthCount: 25, rule: "one-se" });
        const table = result.cv?.table ?? [];
        const best = Math.max(...table.map((r) => r.error));
        const lowest = result.choices?.lowest;
        const oneSe = result.choices?.oneSe;
        expect(lowest?.error).toBe(best);
        // Ties go to the larger strength, then the earlier mix (the number outcome's rule).
        const first = table.find((r) => r.error === best);
        expect(lowest?.mix).toBe(first?.mix);
        expect(lowest?.strength).toBe(first?.strength);
        // One-SE with AUC (ESL 2nd ed. §7.10, turned around): the strongest strength of the best
        // mix whose mean AUC is at least best − SE.
        const se = lowest?.se ?? NaN;
        const candidates = table.filter((r) => r.mix === lowest?.mix && r.error >= best - se);
        const strongest = Math.max(...candidates.map((r) => r.strength));
        expect(oneSe?.strength).toBe(strongest);
        expect(oneSe?.strength).toBeGreaterThanOrEqual(lowest?.strength ?? Infinity);
        expect(result.strength).toBe(oneSe?.strength);
      }),
      { numRuns: 6, seed: 11 },
    );
  });

  test("with deviance and the share misclassified, lower is better", () => {
    const { x, y } = twoClassData(8, 90, 5);
    for (const measure of ["deviance", "misclassified"] as const) {
      const result = fit(x, y, { outcome: "two-class", measure, mixes: [1], folds: 5, strengthCount: 25 });
      const table = result.cv?.table ?? [];
      expect(result.choices?.lowest.error).toBe(Math.min(...table.map((r) => r.error)));
    }
  });

  test("folds that hold out one class have no AUC: averaged over the others with a warning, refused below two", () => {
    const { x, y: drawn } = twoClassData(4, 40, 3);
    // Labels A–D, 10 rows each. A holds out events only; B, C, D both classes.
    const labels = drawn.map((_, i) => "ABCD"[Math.floor(i / 10)]);
    const y = drawn.map((v, i) => (i < 10 ? 1 : i % 3 === 0 ? 1 : 0));
    const result = fit(x, y, { outcome: "two-class", measure: "auc", foldLabels: labels, mixes: [1], strengthCount: 10 });
    expect(result.warnings.find((w) => w.code === "fold-constant")?.message).toMatch(/^1 of the 4 folds hold out rows of one class only, which have no AUC: the cross-validated AUC and its standard error are over the other 3 folds/);
    for (const row of result.cv?.table ?? []) expect(Number.isFinite(row.error)).toBe(true);
    // Only D holds out both classes: refused.
    const lopsided = y.map((_, i) => (i < 10 ? 1 : i < 20 ? 0 : i < 30 ? 1 : i % 2));
    let caught: unknown = null;
    try {
      fit(x, lopsided, { outcome: "two-class", measure: "auc", foldLabels: labels, mixes: [1], strengthCount: 10 });
    } catch (error) {
      caught = error;
    }
    expect(caught).toBeInstanceOf(InputError);
    expect((caught as InputError).message).toMatch(/only 1 of the 4 folds hold out rows of both classes \(at least 2 are needed\)/);
  });

  test("a fold that would train on one class is refused", () => {
    const { x } = twoClassData(6, 30, 2);
    // Time order: the first block (the first fold's only training rows) holds non-events only.
    const y = x.map((_, i) => (i < 12 ? 0 : i % 2));
    let caught: unknown = null;
    try {
      fit(x, y, { outcome: "two-class", timeOrdered: true, folds: 3 });
    } catch (error) {
      caught = error;
    }
    expect(caught).toBeInstanceOf(InputError);
    expect((caught as InputError).code).toBe("folds");
    expect((caught as InputError).message).toMatch(/fold 1 leaves training rows of one class only \(no events\)/);
  });
});

describe("stratified folds", () => {
  test("every fold's event count is within one row of its share of the events (property)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 20, max: 400 }), fc.integer({ min: 2, max: 10 }), fc.double({ min: 0.05, max: 0.6, noNaN: true }), fc.integer({ min: 0, max: 1e6 }), (rows, folds, share, seed) => {
        const random = new TestRandom(seed);
        const y: number[] = Array.from({ length: rows }, () => (random.uniform() < share ? 1 : 0));
        const events = y.reduce((s, v) => s + v, 0);
        const plan = planFolds(rows, null, { scheme: "random", folds, seed, labels: null, strata: y });
        // Stratification (Kohavi 1995, IJCAI): each fold's event share matches the whole's.
        for (const block of plan.blocks) {
          const inFold = Array.from(block).reduce((s, i) => s + y[i], 0);
          expect(Math.abs(inFold - (events * block.length) / rows)).toBeLessThanOrEqual(1);
        }
        const sizes = plan.blocks.map((b) => b.length);
        expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
        // Deterministic for a seed.
        expect(planFolds(rows, null, { scheme: "random", folds, seed, labels: null, strata: y }).blocks).toEqual(plan.blocks);
      }),
      { numRuns: 60, seed: 5 },
    );
  });

  /**
   * The random folds every number outcome has always had, written out from their documentation
   * (engine/random.ts): Mulberry32(seed) drives a Fisher–Yates shuffle of 0..n−1, and the row at
   * shuffled position t goes to fold t mod K.
   */
  function documentedFolds(rows: number, folds: number, seed: number): number[][] {
    let state = seed >>> 0;
    const next = (): number => {
      state = (state + 0x6d2b79f5) >>> 0;
      let t = state;
      t = Math.imul(t ^ (t >>> 15), t | 1);
      t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
      return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
    };
    const order = Array.from({ length: rows }, (_, i) => i);
    for (let i = rows - 1; i > 0; i--) {
      const k = Math.floor(next() * (i + 1));
      [order[i], order[k]] = [order[k], order[i]];
    }
    const blocks: number[][] = Array.from({ length: folds }, () => []);
    const label = new Array<number>(rows);
    order.forEach((row, t) => (label[row] = t % folds));
    for (let i = 0; i < rows; i++) blocks[label[i]].push(i);
    return blocks;
  }

  test.each([
    [50, 5, 1],
    [101, 10, 7],
    [300, 3, 123456],
    [40, 10, -5],
  ])("number outcomes keep their folds exactly (%p rows, %p folds, seed %p)", (rows, folds, seed) => {
    const plan = planFolds(rows, null, { scheme: "random", folds, seed, labels: null });
    expect(plan.blocks.map((b) => Array.from(b))).toEqual(documentedFolds(rows, folds, seed));
    expect(planFolds(rows, null, { scheme: "random", folds, seed, labels: null, strata: null }).blocks).toEqual(plan.blocks);
  });
});
