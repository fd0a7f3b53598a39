/**
 * The compiled floor beside `npm run bench` (bench/floor/floor.c, our own plain C coordinate
 * descent written from Friedman, Hastie & Tibshirani 2010): compile it, hand it a case's data, folds
 * and grids in a binary file, run it, read its timing and cross-validation curve back.
 *
 * The C program is built with `gcc -O3` (portable: no -march) into a directory under the system's
 * temporary folder, once per source version. Without a C compiler, `compileFloor` returns null and
 * says why; the bench then reports the floor as skipped.
 */
import { execFileSync, spawnSync } from "child_process";
import { createHash } from "crypto";
import * as fs from "fs";
import * as os from "os";
import * as path from "path";

export const FLOOR_SOURCE = path.join(__dirname, "floor", "floor.c");
const MAGIC = 0x464c4f31;

/** Everything the floor needs for one case: the same data, folds, mixes and strengths as ours. */
export interface FloorInput {
  n: number;
  p: number;
  /** n × p column-major predictors. */
  x: Float64Array;
  y: Float64Array;
  /** Fold (0..K−1) of each row: the engine's own plan (planFolds). */
  fold: Int32Array;
  folds: number;
  mixes: readonly number[];
  /** One grid per mix, all of the same length (the full grid, whatever ours computed of it). */
  grids: readonly (readonly number[])[];
  tolerance: number;
  maxSweeps: number;
  exactFitRatio: number;
}

export interface FloorMix {
  mix: number;
  /** λ_max computed by the floor from the data (NaN for ridge). */
  top: number;
  points: number;
  sweeps: number;
  /** Strengths at which the sweep cap was hit, over the full path and every fold. */
  capped: number;
  strongRuleMisses: number;
  strengths: number[];
  cv: number[];
  nonzero: number[];
}

export interface FloorRun {
  form: string;
  /** Compute time measured inside the C program (reading the file excluded). */
  ms: number;
  /** Wall time of the whole process (reading the input included). */
  wallMs: number;
  mixes: FloorMix[];
}

/**
 * Compiles floor.c with `gcc -O3` (or $CC) into a temporary directory; returns the binary's path,
 * or null with the reason when no compiler is available or the build fails.
 */
export function compileFloor(): { binary: string | null; reason: string } {
  const compiler = process.env.CC || "gcc";
  const source = fs.readFileSync(FLOOR_SOURCE);
  const tag = createHash("sha256").update(source).update(compiler).digest("hex").slice(0, 12);
  const dir = path.join(os.tmpdir(), `shrinkwise-floor-${tag}`);
  const binary = path.join(dir, "floor");
  if (fs.existsSync(binary)) return { binary, reason: "" };
  const probe = spawnSync(compiler, ["--version"], { encoding: "utf8" });
  if (probe.error || probe.status !== 0) return { binary: null, reason: `no C compiler (${compiler} not found; install gcc, or set CC)` };
  fs.mkdirSync(dir, { recursive: true });
  const build = spawnSync(compiler, ["-O3", "-o", binary, FLOOR_SOURCE, "-lm"], { encoding: "utf8" });
  if (build.status !== 0) return { binary: null, reason: `${compiler} failed to build floor.c: ${build.stderr.trim().split("\n")[0] ?? ""}` };
  return { binary, reason: "" };
}

/** Writes the floor's binary input file (layout documented at the top of floor.c). */
export function writeFloorInput(file: string, input: FloorInput): void {
  const { n, p, mixes, grids } = input;
  const L = grids[0].length;
  for (const grid of grids) if (grid.length !== L) throw new Error("every mix's grid must have the same length");
  const head = Int32Array.from([MAGIC, n, p, input.folds, mixes.length, L, input.maxSweeps, 0]);
  const settings = Float64Array.from([input.tolerance, input.exactFitRatio]);
  const flatGrids = new Float64Array(mixes.length * L);
  grids.forEach((grid, a) => flatGrids.set(grid, a * L));
  const parts = [head, settings, Float64Array.from(mixes), flatGrids, input.fold, input.x, input.y];
  const fd = fs.openSync(file, "w");
  try {
    for (const part of parts) fs.writeSync(fd, new Uint8Array(part.buffer, part.byteOffset, part.byteLength));
  } finally {
    fs.closeSync(fd);
  }
}

/** Runs the compiled floor on an input file and parses its output. */
export function runFloor(binary: string, file: string): FloorRun {
  const start = performance.now();
  const text = execFileSync(binary, [file], { encoding: "utf8", maxBuffer: 64 * 1024 * 1024 });
  const wallMs = performance.now() - start;
  const run: FloorRun = { form: "", ms: NaN, wallMs, mixes: [] };
  for (const line of text.split("\n")) {
    const f = line.split(" ");
    if (f[0] === "form") run.form = f[1];
    else if (f[0] === "ms") run.ms = Number(f[1]);
    else if (f[0] === "mix") {
      run.mixes.push({
        mix: Number(f[2]),
        top: Number(f[4]),
        points: Number(f[6]),
        sweeps: Number(f[8]),
        capped: Number(f[10]),
        strongRuleMisses: Number(f[12]),
        strengths: [],
        cv: [],
        nonzero: [],
      });
    } else if (f[0] === "cv") {
      const mix = run.mixes[Number(f[1])];
      mix.strengths.push(Number(f[3]));
      mix.cv.push(Number(f[4]));
      mix.nonzero.push(Number(f[5]));
    }
  }
  return run;
}
