/**
 * The one mapping from problems to cell error values (functions/errors.ts), and the in-process
 * runner's cancel and progress behaviour.
 */
import { CancelledError, InputError } from "../../engine/errors";
import { cellError, DataError, isCellError, SettingError, toCellError } from "../../functions/errors";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { cancelSource } from "../../functions/runner";

describe("toCellError", () => {
  test("engine InputError → #VALUE! with the engine's message", () => {
    expect(toCellError(new InputError("folds", "folds must be a whole number from 2 to 1000; got 1"))).toMatchObject({
      code: "#VALUE!",
      message: "folds must be a whole number from 2 to 1000; got 1",
    });
  });
  test("SettingError and DataError → #VALUE!; a DataError made 'n/a' → #N/A", () => {
    expect(toCellError(new SettingError("bad setting"))).toMatchObject({ code: "#VALUE!", message: "bad setting" });
    expect(toCellError(new DataError("bad data"))).toMatchObject({ code: "#VALUE!", message: "bad data" });
    expect(toCellError(new DataError("not here", "n/a"))).toMatchObject({ code: "#N/A", message: "not here" });
  });
  test("cancelled → #N/A", () => {
    expect(toCellError(new CancelledError())).toMatchObject({
      code: "#N/A",
      message: "the fit was cancelled before it finished: recalculate to run it again",
    });
  });
  test("errors rebuilt from a worker (plain objects) are recognized by name", () => {
    expect(toCellError({ name: "InputError", message: "from the worker" })).toMatchObject({ code: "#VALUE!", message: "from the worker" });
    expect(toCellError({ name: "CancelledError", message: "x" })).toMatchObject({ code: "#N/A" });
    expect(toCellError({ name: "DataError", message: "gone", availability: "n/a" })).toMatchObject({ code: "#N/A", message: "gone" });
  });
  test("anything unexpected → #N/A saying Shrinkwise could not finish", () => {
    expect(toCellError(new TypeError("x is undefined"))).toMatchObject({ code: "#N/A", message: "Shrinkwise could not finish: x is undefined" });
    expect(toCellError("plain text")).toMatchObject({ code: "#N/A", message: "Shrinkwise could not finish: plain text" });
  });
  test("an existing cell error passes through unchanged", () => {
    const error = new CustomFunctions.Error(CustomFunctions.ErrorCode.invalidValue, "kept");
    expect(toCellError(error)).toBe(error);
    expect(isCellError(error)).toBe(true);
  });
  test("codes without message support carry no message; long messages are cut", () => {
    expect(cellError("invalidNumber", "ignored").message).toBe("");
    expect(cellError("divisionByZero").code).toBe("#DIV/0!");
    const long = toCellError(new SettingError("x".repeat(1000)));
    expect(long.message?.length).toBe(480);
    expect(long.message?.endsWith("…")).toBe(true);
  });
  test("outside Excel (no CustomFunctions.Error) a stand-in with the same fields is made", () => {
    const saved = (globalThis as Record<string, unknown>).CustomFunctions;
    (globalThis as Record<string, unknown>).CustomFunctions = { associate: () => undefined };
    try {
      const error = toCellError(new SettingError("no host"));
      expect(error).toMatchObject({ code: "#VALUE!", message: "no host" });
      expect(isCellError(error)).toBe(true);
    } finally {
      (globalThis as Record<string, unknown>).CustomFunctions = saved;
    }
  });
});

describe("InProcessRunner", () => {
  const rows = Array.from({ length: 30 }, (_, i) => [Math.sin(i + 1), Math.cos(2 * i)]);
  const target = rows.map((r, i) => 1 + 2 * r[0] - r[1] + 0.1 * Math.sin(5 * i));

  test("reports progress and resolves with the engine's result", async () => {
    const seen: number[] = [];
    const result = await new InProcessRunner().fit(
      { predictors: rows, target, options: { mixes: [1], folds: 3, strengthCount: 10 } },
      undefined,
      (p) => seen.push(p.done / p.total),
    );
    expect(result.kind).toBe("shrinkwise-fit");
    expect(seen[seen.length - 1]).toBe(1);
    expect(seen.length).toBe(4); // one full-data path + 3 folds (engine convention)
  });
  test("a token cancelled before the call rejects with CancelledError", async () => {
    const source = cancelSource();
    source.cancel();
    await expect(new InProcessRunner().fit({ predictors: rows, target, options: {} }, source.token)).rejects.toBeInstanceOf(CancelledError);
  });
  test("cancelling during the fit stops it with CancelledError", async () => {
    const source = cancelSource();
    const promise = new InProcessRunner().fit({ predictors: rows, target, options: { folds: 5 } }, source.token, (p) => {
      if (p.done === 1) source.cancel();
    });
    await expect(promise).rejects.toBeInstanceOf(CancelledError);
  });
});
