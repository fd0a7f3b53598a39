/**
 * Repeats, honest error and stability selection in the cells: the settings (names, aliases,
 * ranges, the refusals that keep a mistake from passing silently), what reaches the engine, the
 * cache key (a fit with one of them is never served from a fit without it), and the rows CHOICE
 * adds, checked against the engine's own result for the same request (agreement of two routes).
 * KEPT's stability columns are tested in kept.test.ts.
 */
import { MAX_DRAWS, MAX_REPEATS } from "../../engine/assurance";
import { fit } from "../../engine/fit";
import { choice, coefs, kept, predict, prepare } from "../../functions/api";
import { FitCache } from "../../functions/cache";
import { parseSettings } from "../../functions/settings";
import { CountingRunner, expectRectangular, labelled, QUICK, rejection, sheet, yesNoSheet } from "./support";

function settingError(raw: unknown): string {
  try {
    parseSettings(raw);
  } catch (error) {
    return (error as Error).message;
  }
  throw new Error("no error was raised");
}

describe("settings", () => {
  test("names and aliases in our own words; text and range forms agree", () => {
    const text = parseSettings("repeats=5; honest error=yes; stability=yes; draws=20; q=3; stability threshold=0.8");
    expect(text).toMatchObject({ repeats: 5, honestError: true, stability: true, draws: 20, expectedTerms: 3, stabilityThreshold: 0.8 });
    const range = parseSettings([
      ["fold deals", 5],
      ["Nested CV", true],
      ["stability selection", "on"],
      ["pairs", 20],
      ["expected terms", 3],
      ["π", "80%"],
    ]);
    expect(range).toMatchObject({ repeats: 5, honestError: true, stability: true, draws: 20, expectedTerms: 3, stabilityThreshold: 0.8 });
    expect(parseSettings("stability=yes; pi=0.9").stabilityThreshold).toBe(0.9);
    expect(parseSettings("nested cross-validation=no").honestError).toBe(false);
  });

  test("`threshold` still means the cutoff of a yes/no target", () => {
    const s = parseSettings("threshold=0.3");
    expect(s.cutoff).toBe(0.3);
    expect(s.stabilityThreshold).toBeNull();
  });

  test("ranges: whole repeats 1 to 50, draws 1 to 1000, q 1 or more, π strictly between 0.5 and 1", () => {
    expect(parseSettings(`repeats=${MAX_REPEATS}`).repeats).toBe(50);
    expect(settingError("repeats=0")).toBe("'repeats' must be a whole number from 1 to 50; got '0'");
    expect(settingError("repeats=51")).toBe("'repeats' must be a whole number from 1 to 50; got '51'");
    expect(settingError([["repeats", 2.5]])).toBe("'repeats' must be a whole number from 1 to 50; got 2.5");
    expect(parseSettings(`stability=yes; draws=${MAX_DRAWS}`).draws).toBe(1000);
    expect(settingError("stability=yes; draws=1001")).toBe("'draws' must be a whole number from 1 to 1000; got '1001'");
    expect(settingError("stability=yes; q=0")).toMatch(/^'q' must be a whole number of 1 or more/);
    expect(settingError("stability=yes; q=1.5")).toMatch(/^'q' must be a whole number of 1 or more/);
    expect(settingError("stability=yes; stability threshold=0.5")).toMatch(/^'stability threshold' must be a share between 0.5 and 1 \(not 0.5 or 1\)/);
    expect(settingError("stability=yes; π=1")).toMatch(/^'stability threshold' must be a share between 0.5 and 1/);
    expect(settingError("stability=yes; π=40%")).toMatch(/got '40%'$/);
    expect(settingError("honest error=maybe")).toBe("'honest error' must be yes or no; got 'maybe'");
    expect(settingError("stability=sometimes")).toBe("'stability' must be yes or no; got 'sometimes'");
  });

  test("draws, q and the stability threshold without stability=yes are refused, saying to add it", () => {
    expect(settingError("draws=20")).toBe("draws=20 sets up stability selection, which runs only with stability=yes: add stability=yes, or remove it");
    expect(settingError("q=3; stability threshold=0.8")).toBe(
      "q=3 and stability threshold=0.8 set up stability selection, which runs only with stability=yes: add stability=yes, or remove them",
    );
    expect(settingError("stability=no; π=0.8")).toMatch(/add stability=yes/);
  });

  test("a fixed strength, a fold column or time order refuse what they can't honour", () => {
    expect(settingError("strength=0.1; honest error=yes")).toBe(
      "honest error=yes works on the cross-validated choice, and a fixed strength runs no cross-validation: remove 'strength', or remove it",
    );
    expect(settingError("strength=0.1; repeats=3; stability=yes")).toMatch(/^repeats=3 and stability=yes work on the cross-validated choice/);
    // repeats=1 is the default: nothing to refuse.
    expect(parseSettings("strength=0.1; repeats=1").repeats).toBe(1);
    expect(settingError("time order=yes; repeats=3")).toMatch(/'time order' fixes the folds \(one deal\): remove 'repeats', or 'time order'$/);
    expect(settingError("fold column=Batch; repeats=3")).toMatch(/'fold column' fixes the folds \(one deal\)/);
  });
});

describe("what reaches the engine", () => {
  test("repeats, honestError and stability {draws, expectedTerms, threshold}; defaults stay out of the request", () => {
    const { target, predictors } = sheet(40);
    const full = prepare(target, predictors, null, "repeats=4; honest error=yes; stability=yes; draws=12; q=2; π=0.8").request.options;
    expect(full.repeats).toBe(4);
    expect(full.honestError).toBe(true);
    expect(full.stability).toEqual({ draws: 12, expectedTerms: 2, threshold: 0.8 });
    expect(prepare(target, predictors, null, "stability=yes").request.options.stability).toEqual({});
    const plain = prepare(target, predictors, null, "repeats=1; honest error=no; stability=no").request.options;
    expect(plain).toEqual(prepare(target, predictors, null, null).request.options);
    expect("repeats" in plain || "honestError" in plain || "stability" in plain).toBe(false);
  });

  test("two-class targets take them too", () => {
    const { target, predictors } = yesNoSheet(60);
    const options = prepare(target, predictors, null, "repeats=2; honest error=yes; stability=yes; draws=5").request.options;
    expect(options).toMatchObject({ outcome: "two-class", repeats: 2, honestError: true, stability: { draws: 5 } });
  });
});

describe("cache key", () => {
  test("a fit with stability, repeats or honest error is its own entry; the same settings share one", async () => {
    const { target, predictors } = sheet(40);
    const counting = new CountingRunner();
    const cache = new FitCache(counting);
    await coefs(cache, target, predictors, 1, QUICK);
    await kept(cache, target, predictors, 1, `${QUICK}; stability=yes; draws=3`);
    expect(counting.calls).toBe(2);
    // COEFS with the same stability settings reuses that fit; other draws are another fit.
    await coefs(cache, target, predictors, 1, `${QUICK}; stability=yes; draws=3`);
    expect(counting.calls).toBe(2);
    await kept(cache, target, predictors, 1, `${QUICK}; stability=yes; draws=4`);
    expect(counting.calls).toBe(3);
    await choice(cache, target, predictors, 1, `${QUICK}; repeats=2`);
    await choice(cache, target, predictors, 1, `${QUICK}; honest error=yes`);
    expect(counting.calls).toBe(5);
    // repeats=1 and honest error=no are the defaults: the first fit answers.
    await choice(cache, target, predictors, 1, `${QUICK}; repeats=1; honest error=no`);
    expect(counting.calls).toBe(5);
  });
});

/*
 * The tests below read what the engine fills in (FitResult.cv.repeats, FitResult.honest,
 * FitResult.stability): they pass once the engine's repeats / honest error (branch assure-cv) and
 * stability selection (branch stability) are in.
 */
describe("CHOICE rows", () => {
  test("repeats: the count, and a note when the choice used an averaged curve", async () => {
    const { target, predictors } = sheet(48);
    const runner = new CountingRunner();
    const one = labelled(await choice(runner, target, predictors, 1, `${QUICK}; seed=5`));
    expect(one.get("repeats")).toBe(1);
    expect(one.has("repeats note")).toBe(false);
    const out = await choice(runner, target, predictors, 1, `${QUICK}; seed=5; repeats=3`);
    expectRectangular(out);
    const v = labelled(out);
    const request = runner.last();
    const result = fit(request.predictors, request.target, request.options);
    expect(result.cv?.repeats).toBe(3);
    expect(v.get("repeats")).toBe(3);
    expect(v.get("repeats note")).toBe(
      "the choice used the curve averaged over 3 deals of the folds (seeds 5 to 7): the CV error above is the mean over all their held-out folds, its ± SE the average of the deals' own SEs",
    );
    // The CV error shown is the engine's averaged curve's at the chosen point.
    expect(v.get("CV MSE")).toBe(result.choices?.lowest.error);
  });

  test("honest error: its value and SE from the engine, and the note that the CV error above chose the model", async () => {
    const { target, predictors } = sheet(48);
    const runner = new CountingRunner();
    const out = await choice(runner, target, predictors, "0, 1", `${QUICK}; honest error=yes`);
    expectRectangular(out);
    const labels = out.map((row) => row[0]);
    // Appended after the rows CHOICE always had.
    expect(labels.slice(labels.indexOf("notes"))).toEqual(["notes", "repeats", "honest CV error (whole procedure)", "honest ± SE", "honest error note"]);
    const request = runner.last();
    const honest = fit(request.predictors, request.target, request.options).honest;
    if (!honest) throw new Error("the engine gave no honest error");
    const v = labelled(out);
    expect(v.get("honest CV error (whole procedure)")).toBe(honest.error);
    expect(v.get("honest ± SE")).toBe(honest.se);
    expect(v.get("honest error note")).toMatch(/^the CV MSE above is the one that chose the model, so it is optimistic for it/);
    // The optimistic value the engine reports is the one CHOICE shows as the CV error.
    expect(v.get("CV MSE")).toBe(honest.optimistic);
    expect(honest.error).toBeGreaterThan(0);
  });
});

describe("two-class", () => {
  test("interval stays refused for a yes/no target, whatever else is set", async () => {
    const { target, predictors } = yesNoSheet(60);
    const error = await rejection(predict(new CountingRunner(), target, predictors, predictors, 1, `${QUICK}; interval=0.9; repeats=2`));
    expect(error.message).toMatch(/prediction intervals are for number targets/);
  });
});
