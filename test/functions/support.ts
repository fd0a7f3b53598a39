/**
 * Shared pieces of the cell-function tests: a FitRunner that counts and records requests
 * around the in-process runner, a small deterministic worksheet, and helpers to read spilled
 * tables and caught cell errors.
 */
import type { FitResult } from "../../engine/fit";
import { mulberry32 } from "../../engine/random";
import { InProcessRunner } from "../../functions/inProcessRunner";
import type { CancelToken, FitProgress, FitRequest, FitRunner } from "../../functions/runner";
import type { Spill } from "../../functions/spill";

export class CountingRunner implements FitRunner {
  readonly requests: FitRequest[] = [];
  private readonly inner = new InProcessRunner();
  get calls(): number {
    return this.requests.length;
  }
  fit(request: FitRequest, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult> {
    this.requests.push(request);
    return this.inner.fit(request, cancel, onProgress);
  }
  last(): FitRequest {
    const request = this.requests[this.requests.length - 1];
    if (!request) throw new Error("no request was made");
    return request;
  }
}

const REGIONS = ["North", "East", "East", "West", "South", "East", "North"];

/**
 * A worksheet of `rows` data rows: Size and Temp (numbers), Region (text: East most frequent),
 * target Sales = 2 + 1.5·Size + region effect + 0.1·Temp + a little wiggle. With `header`, row 1
 * of both ranges is the header.
 */
export function sheet(rows = 42, header = true): { target: unknown[][]; predictors: unknown[][] } {
  const target: unknown[][] = header ? [["Sales"]] : [];
  const predictors: unknown[][] = header ? [["Size", "Region", "Temp"]] : [];
  for (let i = 0; i < rows; i++) {
    const region = REGIONS[i % REGIONS.length];
    const size = 5 + 3 * Math.sin(i + 1);
    const temp = 10 * Math.cos(1.3 * i);
    const effect = region === "North" ? 2 : region === "West" ? -1 : region === "South" ? 0.5 : 0;
    predictors.push([size, region, temp]);
    target.push([2 + 1.5 * size + effect + 0.1 * temp + 0.3 * Math.sin(7 * i)]);
  }
  return { target, predictors };
}

/** The same data encoded by hand (reference East; indicators North, West, South in first-appearance order). */
export function encodedByHand(rows = 42): { x: number[][]; y: number[]; names: string[] } {
  const { target, predictors } = sheet(rows, false);
  const x = predictors.map((row) => {
    const region = row[1] as string;
    return [row[0] as number, region === "North" ? 1 : 0, region === "West" ? 1 : 0, region === "South" ? 1 : 0, row[2] as number];
  });
  return { x, y: target.map((r) => r[0] as number), names: ["Size", "Region: North", "Region: West", "Region: South", "Temp"] };
}

/** Settings that keep cross-validated fits quick. */
export const QUICK = "folds=4; grid size=20";

/** label → value of a two-column label | value spill. */
export function labelled(spill: Spill): Map<string, unknown> {
  const map = new Map<string, unknown>();
  for (const row of spill.slice(1)) map.set(String(row[0]), row[1]);
  return map;
}

/** term → coefficient of a COEFS spill. */
export function coefficientMap(spill: Spill): Map<string, number> {
  const map = new Map<string, number>();
  for (const row of spill.slice(1)) map.set(String(row[0]), row[1] as number);
  return map;
}

/** The error a promise rejects with (fails the test when it resolves). */
export async function rejection(promise: Promise<unknown>): Promise<{ code: string; message: string }> {
  try {
    await promise;
  } catch (e) {
    const error = e as { code?: unknown; message?: unknown };
    return { code: String(error.code), message: String(error.message ?? "") };
  }
  throw new Error("expected the call to fail, but it returned a result");
}

/** Every row the same length and no null/undefined cell. */
export function expectRectangular(spill: Spill): void {
  const width = spill[0].length;
  for (const row of spill) {
    expect(row).toHaveLength(width);
    for (const cell of row) expect(cell === null || cell === undefined).toBe(false);
  }
}

/**
 * A yes/no worksheet of `rows` data rows (header on top): Size, Region, Temp as in `sheet`, and a
 * target whose event ('fail', or TRUE, or 1 by `kind`) is drawn with probability
 * 1 / (1 + e^−η), η = −1 + 0.9·(Size − 5) + (North 0.8, West −0.6) + 0.05·Temp, uniforms from the
 * engine's own seeded generator (so the sheet is the same on every run). Invented data.
 */
export function yesNoSheet(
  rows = 80,
  kind: "labels" | "booleans" | "numbers" = "labels",
  seed = 7,
): { target: unknown[][]; predictors: unknown[][]; events: number } {
  const next = mulberry32(seed);
  const { predictors } = sheet(rows, true);
  const target: unknown[][] = [["Outcome"]];
  let events = 0;
  for (let i = 1; i <= rows; i++) {
    const [size, region, temp] = predictors[i] as [number, string, number];
    const eta = -1 + 0.9 * (size - 5) + (region === "North" ? 0.8 : region === "West" ? -0.6 : 0) + 0.05 * temp;
    const event = next() < 1 / (1 + Math.exp(-eta));
    if (event) events++;
    target.push([kind === "labels" ? (event ? "fail" : "pass") : kind === "booleans" ? event : event ? 1 : 0]);
  }
  return { target, predictors, events };
}
