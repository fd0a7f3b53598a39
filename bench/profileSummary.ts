/**
 * Summary of a CPU profile of bench/profile.ts (a script, not a test):
 *   tsx bench/profileSummary.ts PROFILE.cpuprofile BUNDLE.js [--top 10] [--markdown | --json] [--residual]
 * BUNDLE.js is the esbuild bundle the profile was taken from (its `// engine/x.ts` markers tell
 * which source file each line came from; --residual labels the sweeps as residual-form). Prints self time by function (name and source file,
 * as a share of the samples that weren't idle) and by phase of the fit. Helpers shared by several
 * phases (dotRange, toOriginal, stableCentre, closures, …) are charged to the phase of the
 * nearest caller that has one. bench/PROFILE.md holds the summary for the bench cases.
 */
import { readFileSync } from "node:fs";

interface Frame {
  functionName: string;
  url: string;
  lineNumber: number;
}
interface ProfileNode {
  id: number;
  callFrame: Frame;
  children?: number[];
}
interface CpuProfile {
  nodes: ProfileNode[];
  samples: number[];
  timeDeltas: number[];
}

/** Bundle line → source file, from esbuild's `// path/to/file.ts` markers. */
function sourceFiles(bundle: string): (line: number) => string {
  const starts: { line: number; file: string }[] = [];
  readFileSync(bundle, "utf8")
    .split("\n")
    .forEach((text, k) => {
      const match = /^\/\/ ((?:engine|bench|functions|node_modules)\/\S+\.[jt]s)$/.exec(text);
      if (match) starts.push({ line: k, file: match[1] });
    });
  return (line) => {
    let file = "";
    for (const s of starts) if (s.line <= line) file = s.file;
    return file;
  };
}

const DESCENT_SWEEP = new Set(["sweep", "applyChange", "residualGradient", "softThreshold"]);
const DESCENT_NEWTON = new Set(["newtonStep", "choleskySolveInPlace", "dualSolve", "productSlots", "growProducts"]);
const CHECKS = new Set(["solve", "kktViolation", "coordinateViolation", "refreshGradient", "topFromGradient", "topStrength", "extrapolate", "residualMeanSquare", "setCoefficients", "fitUnpenalized"]);
const INPUT = new Set(["prepare", "workingCopy", "fullShift", "checkPredictors", "checkRowVector", "checkWeights", "checkPerPredictor", "checkMixes", "checkClasses", "fromRows", "powerOfTwo", "binaryExponent", "unitExponent", "scaleByPowerOfTwo", "makePlan", "planFolds", "randomPlan", "checkPlan", "rowsOfBlocks"]);
const GRAM = new Set(["blockSums", "accumulateSums", "emptySums", "takeLargest", "problemFromSums", "buildProblems"]);
const FOLD_ERRORS = new Set(["foldErrors", "spectralFoldErrors", "summarise", "gatherHeldOut", "selectRows", "twoClassFoldErrors", "heldOutPredictor", "heldOut", "scoreTwoClass", "devianceFromScores", "areaUnderCurve", "misclassifiedShare"]);
const ASSEMBLY = new Set(["assemble", "assembleTwoClass", "heldOutModels", "pathValueInDataUnits", "errorUnits", "keptShares", "linearModel", "predict", "linearScore", "coefficientInDataUnits"]);

/** Helpers listed with their caller. */
const SHARED = new Set(["dotRange", "toOriginal", "stableCentre", "applyChange", "portableLog"]);

/** The phase a frame belongs to, or null to charge it to its caller. */
function phaseOf(name: string, file: string, gramForm: boolean): string | null {
  if (name === "(garbage collector)") return "garbage collection";
  if (name === "(idle)") return "idle";
  if (name === "(program)" || name === "(root)") return "outside the fit (startup, data generation, V8)";
  if (!file) return name === "" || name === "(anonymous)" ? null : "outside the fit (startup, data generation, V8)";
  if (file.startsWith("bench/")) return name === "makeData" || name === "normalSource" || name === "makeTwoClass" ? "outside the fit (startup, data generation, V8)" : null;
  if (file === "engine/problem.ts") {
    if (GRAM.has(name)) return "Gram / block sums";
    if (name === "problemFromRows") return "standardized rows (residual form)";
    return null;
  }
  if (file === "engine/eigen.ts" || file === "engine/ridgeSpectral.ts") {
    if (FOLD_ERRORS.has(name)) return "fold errors";
    if (name === "" || name === "(anonymous)" || name === "eigenvalues") return null;
    return "ridge eigendecomposition and spectral path";
  }
  if (file === "engine/descent.ts") {
    if (DESCENT_SWEEP.has(name)) return gramForm ? "path sweeps (gram form)" : "path sweeps (residual form)";
    if (DESCENT_NEWTON.has(name)) return "active-set Newton steps";
    if (CHECKS.has(name)) return "strong rule / KKT checks / warm start";
    return null;
  }
  if (file === "engine/logistic.ts" || file === "engine/logisticBaseline.ts") {
    if (name === "" || name === "(anonymous)") return null;
    return "logistic solver (all of logistic.ts)";
  }
  if (file === "engine/path.ts") return name === "" ? null : "path driver (runPath, grid)";
  if (file === "engine/validate.ts" || file === "engine/scale.ts" || file === "engine/folds.ts" || file === "engine/matrix.ts") {
    if (FOLD_ERRORS.has(name)) return "fold errors";
    return INPUT.has(name) || file !== "engine/matrix.ts" ? "input checks / scaling / fold plan" : null;
  }
  if (file === "engine/metrics.ts" || file === "engine/classMetrics.ts") return "fold errors";
  if (file === "engine/fit.ts" || file === "engine/model.ts") {
    if (INPUT.has(name)) return "input checks / scaling / fold plan";
    if (GRAM.has(name)) return "Gram / block sums";
    if (FOLD_ERRORS.has(name)) return "fold errors";
    if (ASSEMBLY.has(name)) return "result assembly";
    if (name === "toOriginal" || name === "logisticToOriginal" || name === "" || name === "(anonymous)") return null;
    return "orchestration (fit, fitSteps, choices)";
  }
  return null;
}

function main(): void {
  const args = process.argv.slice(2);
  const [profilePath, bundle] = args;
  const topAt = args.indexOf("--top");
  const top = topAt >= 0 ? Number(args[topAt + 1]) : 10;
  const gramForm = !args.includes("--residual");
  const markdown = args.includes("--markdown");
  const profile = JSON.parse(readFileSync(profilePath, "utf8")) as CpuProfile;
  const fileOf = sourceFiles(bundle);
  const byId = new Map(profile.nodes.map((n) => [n.id, n]));
  const parent = new Map<number, number>();
  for (const n of profile.nodes) for (const c of n.children ?? []) parent.set(c, n.id);
  const label = (n: ProfileNode): { name: string; file: string } => {
    const isBundle = n.callFrame.url.endsWith(bundle.replace(/.*\//, ""));
    return { name: n.callFrame.functionName, file: isBundle ? fileOf(n.callFrame.lineNumber) : "" };
  };
  const phaseCache = new Map<number, string>();
  const phaseOfNode = (id: number): string => {
    const cached = phaseCache.get(id);
    if (cached) return cached;
    let at: number | undefined = id;
    let phase: string | null = null;
    while (at !== undefined && phase === null) {
      const { name, file } = label(byId.get(at) as ProfileNode);
      phase = phaseOf(name, file, gramForm);
      at = parent.get(at);
    }
    const out = phase ?? "outside the fit (startup, data generation, V8)";
    phaseCache.set(id, out);
    return out;
  };
  const self = new Map<string, number>();
  const phases = new Map<string, number>();
  let total = 0;
  for (let s = 0; s < profile.samples.length; s++) {
    const id = profile.samples[s];
    const dt = profile.timeDeltas[s] ?? 0;
    const phase = phaseOfNode(id);
    if (phase === "idle") continue;
    total += dt;
    const { name, file } = label(byId.get(id) as ProfileNode);
    // Shared helpers are named with their caller (dotRange serves the Gram pass and Cholesky alike).
    const up = parent.get(id);
    const caller = SHARED.has(name) && up !== undefined ? ` ← ${label(byId.get(up) as ProfileNode).name}` : "";
    const key = `${name || "(anonymous)"}${caller} (${file || "V8/node"})`;
    self.set(key, (self.get(key) ?? 0) + dt);
    phases.set(phase, (phases.get(phase) ?? 0) + dt);
  }
  const pct = (v: number): string => ((100 * v) / total).toFixed(1);
  const fns = [...self].sort((a, b) => b[1] - a[1]).slice(0, top);
  const ph = [...phases].sort((a, b) => b[1] - a[1]);
  if (args.includes("--json")) {
    console.log(JSON.stringify({ seconds: total / 1e6, functions: fns.map(([k, v]) => [k, Number(pct(v))]), phases: ph.map(([k, v]) => [k, Number(pct(v))]) }));
  } else if (markdown) {
    console.log("| function (file) | % self |\n|---|---:|");
    for (const [k, v] of fns) console.log(`| ${k} | ${pct(v)} |`);
    console.log("\n| phase | % |\n|---|---:|");
    for (const [k, v] of ph) console.log(`| ${k} | ${pct(v)} |`);
  } else {
    console.log(`${(total / 1e6).toFixed(2)} s of samples`);
    for (const [k, v] of fns) console.log(`${pct(v).padStart(5)}  ${k}`);
    console.log("-- phases");
    for (const [k, v] of ph) console.log(`${pct(v).padStart(5)}  ${k}`);
  }
}

main();
