/**
 * SHRINK.KEPT: each term's kept share over the cross-validation folds in the cells. The numbers
 * are checked against the engine's own route (fit on the same request, then its keptShare and a
 * recount from its fold models), the order (most kept first, ties in the columns' order), the
 * shared cache (no second fit after COEFS), the yes/no header and the refusals; with stability=yes,
 * the stable share and stable columns against the engine's result and the bound row.
 */
import { falseSelectionBound } from "../../engine/assurance";
import { fit } from "../../engine/fit";
import { readFileSync } from "fs";
import { join } from "path";
import { coefs, kept } from "../../functions/api";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { demoSheet, RANGES } from "../../taskpane/standalone/preview";
import { FitCache } from "../../functions/cache";
import { CountingRunner, expectRectangular, QUICK, rejection, sheet, yesNoSheet } from "./support";

describe("SHRINK.KEPT", () => {
  test("term | coefficient | kept in folds | same sign, the engine's numbers, most kept first", async () => {
    const { target, predictors } = sheet(60);
    const runner = new CountingRunner();
    const out = await kept(runner, target, predictors, 1, QUICK);
    expectRectangular(out);
    expect(out[0]).toEqual(["term", "coefficient", "kept in folds", "same sign"]);
    const request = runner.last();
    const result = fit(request.predictors, request.target, request.options);
    const models = result.foldModels ?? [];
    expect(models.length).toBe(4);
    // One row per term (no intercept, no reference level), each with the engine's coefficient and
    // a share recounted here from the fold models.
    expect(out.length - 1).toBe(result.terms.length);
    for (const row of out.slice(1)) {
      const j = result.terms.indexOf(row[0] as string);
      expect(j).toBeGreaterThanOrEqual(0);
      expect(row[1]).toBe(result.coefficients[j]);
      const nonzero = models.filter((m) => m.coefficients[j] !== 0).length;
      expect(row[2]).toBe(nonzero / models.length);
      const agree = models.filter((m) => Math.sign(m.coefficients[j]) === Math.sign(result.coefficients[j]) || (m.coefficients[j] === 0 && result.coefficients[j] === 0)).length;
      expect(row[3]).toBe(agree / models.length);
    }
    // Order: kept share descending; equal shares keep the columns' order.
    for (let r = 2; r < out.length; r++) {
      const [a, b] = [out[r - 1], out[r]];
      expect(a[2] as number).toBeGreaterThanOrEqual(b[2] as number);
      if (a[2] === b[2]) expect(result.terms.indexOf(a[0] as string)).toBeLessThan(result.terms.indexOf(b[0] as string));
    }
    // Size carries most of the signal: kept by every fold with the model's sign.
    expect(out[1]).toEqual(["Size", result.coefficients[0], 1, 1]);
  });

  test("after COEFS over the same ranges, KEPT reuses the cached fit", async () => {
    const { target, predictors } = sheet(50);
    const counting = new CountingRunner();
    const cache = new FitCache(counting);
    await coefs(cache, target, predictors, null, QUICK);
    await kept(cache, target, predictors, null, QUICK);
    expect(counting.calls).toBe(1);
  });

  test("yes/no target: the coefficient header says log-odds; shares from the fold fits", async () => {
    const { target, predictors } = yesNoSheet(120);
    const out = await kept(new CountingRunner(), target, predictors, 1, QUICK);
    expect(out[0]).toEqual(["term", "coefficient (log-odds of 'fail')", "kept in folds", "same sign"]);
    for (const row of out.slice(1)) {
      for (const share of [row[2], row[3]] as number[]) {
        expect(share).toBeGreaterThanOrEqual(0);
        expect(share).toBeLessThanOrEqual(1);
        // Four folds: shares are quarters.
        expect(Number.isInteger(share * 4)).toBe(true);
      }
    }
  });

  test("same seed: the same table", async () => {
    const { target, predictors } = sheet(45);
    const a = await kept(new CountingRunner(), target, predictors, null, `${QUICK}; seed=3`);
    const b = await kept(new CountingRunner(), target, predictors, null, `${QUICK}; seed=3`);
    expect(a).toEqual(b);
  });

  test("a fixed strength has no folds: #N/A saying what to change", async () => {
    const { target, predictors } = sheet(40);
    const error = await rejection(kept(new CountingRunner(), target, predictors, 1, "strength=0.1"));
    expect(error.code).toBe("#N/A");
    expect(error.message).toMatch(/fixed strength runs no cross-validation: remove 'strength'/);
  });
});

/* Reads FitResult.stability, which the engine fills in once stability selection (branch stability) is in. */
describe("SHRINK.KEPT with stability=yes", () => {
  test("stable share | stable beside the kept shares, the engine's numbers, then the bound row", async () => {
    const { target, predictors } = sheet(60);
    const runner = new CountingRunner();
    const out = await kept(runner, target, predictors, 1, `${QUICK}; stability=yes; draws=10; q=2`);
    expectRectangular(out);
    expect(out[0]).toEqual(["term", "coefficient", "kept in folds", "same sign", "stable share", "stable"]);
    const request = runner.last();
    const result = fit(request.predictors, request.target, request.options);
    const s = result.stability;
    const shares = result.keptShare;
    if (!s || !shares) throw new Error("the engine ran no stability selection");
    const body = out.slice(1, -1);
    expect(body.length).toBe(result.terms.length);
    for (const row of body) {
      const j = result.terms.indexOf(row[0] as string);
      expect(row).toEqual([result.terms[j], result.coefficients[j], shares[j].kept, shares[j].sameSign, s.share[j], s.share[j] >= s.threshold]);
      expect(s.candidate?.[j]).toBe(true);
      expect(typeof row[5]).toBe("boolean");
    }
    // Largest kept share first; ties: larger stable share, then the terms' order.
    for (let r = 1; r < body.length; r++) {
      const [a, b] = [body[r - 1], body[r]];
      expect(a[2] as number).toBeGreaterThanOrEqual(b[2] as number);
      if (a[2] === b[2]) {
        expect(a[4] as number).toBeGreaterThanOrEqual(b[4] as number);
        if (a[4] === b[4]) expect(result.terms.indexOf(a[0] as string)).toBeLessThan(result.terms.indexOf(b[0] as string));
      }
    }
    const footer = out[out.length - 1];
    expect(footer[0]).toBe("expected false selections at most");
    // The published bound, recomputed from q, π and p (Meinshausen & Bühlmann 2010, Theorem 1).
    expect(footer[1]).toBeCloseTo(falseSelectionBound(2, s.threshold, s.candidates), 12);
    expect(s.expectedTerms).toBe(2);
    expect(s.draws).toBe(10);
    expect(footer[2]).toBe(
      `q = 2 (the average number of terms selected at a counted strength, at most), π = 0.75 (the share that makes a term stable), p = ${s.candidates} terms that can be selected, 10 pairs of half-samples (20 fits) at mix 1`,
    );
    expect(footer.slice(3)).toEqual(["", "", ""]);
  });

  test("without stability the table is as before: four columns, no footer", async () => {
    const { target, predictors } = sheet(40);
    const out = await kept(new CountingRunner(), target, predictors, 1, QUICK);
    expect(out[0]).toEqual(["term", "coefficient", "kept in folds", "same sign"]);
    expect(out[out.length - 1][0]).not.toBe("expected false selections at most");
  });

  test("yes/no target: the same columns, the coefficient header in log-odds", async () => {
    const { target, predictors } = yesNoSheet(120);
    const out = await kept(new CountingRunner(), target, predictors, 1, `${QUICK}; stability=yes; draws=4`);
    expect(out[0]).toEqual(["term", "coefficient (log-odds of 'fail')", "kept in folds", "same sign", "stable share", "stable"]);
    expect(out[out.length - 1][0]).toBe("expected false selections at most");
  });

  test("a never-penalized term says so in place of a share, is not stable, and is not counted in p", async () => {
    const { target, predictors } = sheet(60);
    const runner = new CountingRunner();
    const out = await kept(runner, target, predictors, 1, `${QUICK}; no penalty=Temp; stability=yes; draws=6; q=2`);
    const request = runner.last();
    const s = fit(request.predictors, request.target, request.options).stability;
    if (!s) throw new Error("the engine ran no stability selection");
    const temp = out.find((row) => row[0] === "Temp");
    expect(temp?.slice(4)).toEqual(["in every model (never penalized)", false]);
    // Size, the three Region indicators: four candidates; the bound counts them only.
    expect(s.candidates).toBe(4);
    expect(out[out.length - 1][1]).toBeCloseTo(falseSelectionBound(2, 0.75, 4), 12);
    expect(out[out.length - 1][2]).toMatch(/p = 4 terms that can be selected/);
  });

  test("the README's stability example on the demo data is what the function returns", async () => {
    const demo = demoSheet();
    const readme = readFileSync(join(__dirname, "..", "..", "README.md"), "utf8");
    expect(readme).toContain(`\`=SHRINK.KEPT(${RANGES.target}, ${RANGES.predictors}, , "stability=yes")\``);
    const out = await kept(new InProcessRunner(), demo.target, demo.predictors, null, "stability=yes");
    const shown = (cell: unknown): string =>
      typeof cell === "number" ? String(Number(cell.toPrecision(4))) : typeof cell === "boolean" ? (cell ? "TRUE" : "FALSE") : String(cell);
    for (const row of out) expect(readme).toContain(`| ${row.map(shown).join(" | ")} |`);
  });
});
