/**
 * Two-class measures against their definitions, counted by hand on small examples.
 */
import { areaUnderCurve, binomialDeviance, devianceFromScores, misclassifiedShare, scoreTwoClass, softplus } from "../../engine/classMetrics";
import { logistic } from "../../engine/model";
import { readOutcome, parseOutcome } from "../../engine/outcome";
import { InputError } from "../../engine/errors";

describe("AUC as the Mann–Whitney statistic (Hanley & McNeil 1982, Radiology 143)", () => {
  test("hand-counted example with ties", () => {
    // Events score 0.9, 0.6, 0.4; non-events 0.6, 0.3, 0.2, 0.4.
    // Pairs (3 × 4 = 12): 0.9 beats all 4; 0.6 beats 0.3, 0.2, 0.4 and ties 0.6 (3.5);
    // 0.4 beats 0.3, 0.2, ties 0.4 (2.5). Total 10 of 12.
    const y = [1, 1, 1, 0, 0, 0, 0];
    const s = [0.9, 0.6, 0.4, 0.6, 0.3, 0.2, 0.4];
    expect(areaUnderCurve(y, s)).toBeCloseTo(10 / 12, 15);
  });
  test("weights count as repeated rows", () => {
    const y = [1, 0, 1, 0];
    const s = [0.7, 0.5, 0.5, 0.2];
    const w = [2, 1, 1, 3];
    // Expanded: events 0.7, 0.7, 0.5; non-events 0.5, 0.2, 0.2, 0.2 → 0.7 beats all (×2 = 8), 0.5 ties 0.5 and beats three 0.2 (3.5): 11.5 / 12.
    expect(areaUnderCurve(y, s, w)).toBeCloseTo(11.5 / 12, 15);
  });
  test("brute-force definition on random data", () => {
    let seed = 7;
    const rand = (): number => ((seed = (seed * 16807) % 2147483647) / 2147483647);
    const y: number[] = [];
    const s: number[] = [];
    for (let i = 0; i < 300; i++) {
      y.push(rand() < 0.3 ? 1 : 0);
      s.push(Math.round(rand() * 20) / 20);
    }
    let pairs = 0;
    let won = 0;
    for (let i = 0; i < y.length; i++) {
      for (let j = 0; j < y.length; j++) {
        if (y[i] === 1 && y[j] === 0) {
          pairs++;
          won += s[i] > s[j] ? 1 : s[i] === s[j] ? 0.5 : 0;
        }
      }
    }
    expect(areaUnderCurve(y, s)).toBeCloseTo(won / pairs, 13);
  });
  test("one class only gives NaN", () => {
    expect(areaUnderCurve([1, 1], [0.2, 0.3])).toBeNaN();
  });
});

describe("deviance and Brier score from their formulas (common practice)", () => {
  const y = [1, 0, 1, 1, 0];
  const eta = [2, -1, 0.5, -0.3, 8];
  const p = eta.map(logistic);
  test("deviance from probabilities and from log-odds agree with −2 Σ [y log p + (1 − y) log(1 − p)] / n", () => {
    let direct = 0;
    for (let i = 0; i < y.length; i++) direct += -2 * (y[i] * Math.log(p[i]) + (1 - y[i]) * Math.log(1 - p[i]));
    direct /= y.length;
    expect(binomialDeviance(y, p)).toBeCloseTo(direct, 10);
    // η = 40 for a non-event: p rounds to 1 and log(1 − p) is −∞, the log-odds route keeps 2 × 40.
    expect(devianceFromScores(y, eta)).toBeCloseTo(direct, 10);
    expect(devianceFromScores([0], [40])).toBeCloseTo(80, 12);
  });
  test("softplus is log(1 + e^η) everywhere", () => {
    for (const e of [-800, -40, -1, -1e-12, 0, 1e-12, 3, 37, 800]) {
      const expected = e > 30 ? e + Math.exp(-e) : Math.log1p(Math.exp(e));
      expect(Math.abs(softplus(e) - expected)).toBeLessThanOrEqual(1e-15 * Math.max(1, Math.abs(expected)));
    }
  });
  test("Brier, log loss and the table at a cutoff", () => {
    const score = scoreTwoClass(y, p, { cutoff: 0.5 });
    let brier = 0;
    for (let i = 0; i < y.length; i++) brier += (p[i] - y[i]) ** 2;
    expect(score.brier).toBeCloseTo(brier / 5, 15);
    expect(score.logLoss).toBeCloseTo(binomialDeviance(y, p) / 2, 15);
    // p ≥ 0.5: rows 1 (event), 3 (event), 5 (non-event); row 4 (event, p 0.43) missed; row 2 cleared.
    expect([score.eventsCaught, score.eventsMissed, score.falseAlarms, score.correctAllClear]).toEqual([2, 1, 1, 1]);
    expect(score.accuracy).toBeCloseTo(3 / 5, 15);
    expect(score.sensitivity).toBeCloseTo(2 / 3, 15);
    expect(score.specificity).toBeCloseTo(1 / 2, 15);
    expect(misclassifiedShare(y, p, 0.5)).toBeCloseTo(2 / 5, 15);
  });
  test("a certain wrong prediction has infinite deviance, not a made-up number", () => {
    expect(binomialDeviance([1], [0])).toBe(Infinity);
  });
});

describe("reading an outcome column", () => {
  test("auto: TRUE/FALSE, 0/1 and two texts are two-class; other numbers are numbers", () => {
    expect(readOutcome([true, false, true]).kind).toBe("two-class");
    expect(readOutcome([0, 1, 1, 0])).toMatchObject({ kind: "two-class", event: "1", other: "0" });
    expect(readOutcome([1, 2, 1]).kind).toBe("number");
    expect(readOutcome([0.5, 1, 0]).kind).toBe("number");
    const r = readOutcome(["pass", "fail", "pass", "Pass"]);
    expect(r).toMatchObject({ kind: "two-class", event: "fail", other: "pass", eventCount: 1, otherCount: 3 });
    if (r.kind === "two-class") expect(Array.from(r.values)).toEqual([0, 1, 0, 0]);
  });
  test("event named by the user, any case; ties are broken alphabetically and said", () => {
    expect(readOutcome(["yes", "no"], { event: " YES " })).toMatchObject({ event: "yes", note: null });
    const tie = readOutcome(["pass", "fail"]);
    expect(tie).toMatchObject({ event: "fail" });
    if (tie.kind === "two-class") expect(tie.note).toMatch(/alphabetical/);
    expect(() => readOutcome(["yes", "no"], { event: "maybe" })).toThrow(/not one of/);
  });
  test("errors say what to fix", () => {
    expect(() => readOutcome(["yes", "no"], { outcome: "number" })).toThrow(/two-class/);
    expect(() => readOutcome(["a", "b", "c"], { outcome: "two-class" })).toThrow(/exactly two/);
    expect(() => readOutcome([1, 1], { outcome: "two-class" })).toThrow(InputError);
    expect(parseOutcome("Two class")).toBe("two-class");
    expect(parseOutcome("numeric")).toBe("number");
    expect(parseOutcome("maybe")).toBeNull();
  });
});
