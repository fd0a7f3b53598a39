/**
 * Where one fit allocates (a script, not a test): V8's sampling heap profiler, through node's
 * inspector, over one fit of a bench case on the pinned workload, counting objects that were
 * collected again (garbage) as well as those that survive, then the bytes by function.
 *
 *   npx esbuild bench/allocations.ts --bundle --platform=node --target=node20 --keep-names --outfile=/tmp/p/allocations.js
 *   node /tmp/p/allocations.js 100000x20 [--fit N] [--top 20]
 *
 * `--fit N` profiles the (N+1)-th fit of the process (default 0: the first after a small warm-up,
 * as `npm run bench` times it). In code V8 has not optimized yet every double a loop computes is
 * a heap object, so a large count in a numeric function says it ran unoptimized; at N ≥ 2 what
 * remains is what the fit allocates by design. bench/PROFILE.md has the figures.
 */
import { Session } from "inspector";
import { fit, FitOptions } from "../engine/fit";
import { makeData } from "./data";

interface HeapNode {
  callFrame: { functionName: string; url: string; lineNumber: number };
  selfSize: number;
  children: HeapNode[];
}

function argValue(args: string[], flag: string, fallback: number): number {
  const at = args.indexOf(flag);
  return at >= 0 ? Number(args[at + 1]) : fallback;
}

async function main(): Promise<void> {
  const args = process.argv.slice(2);
  const name = args[0] ?? "100000x20";
  const before = argValue(args, "--fit", 0);
  const top = argValue(args, "--top", 20);
  const [n, p] = name.split("x").map(Number);
  const options: FitOptions = { mixes: [0, 0.2, 0.4, 0.6, 0.8, 1], folds: 10, seed: 1, strengthCount: 100, lowEndRatio: p >= n ? 1e-2 : 1e-4, stopEarly: false };
  const warm = makeData(200, 10, 1);
  fit(warm.x, warm.y, { mixes: [0.5], folds: 3 });
  const { x, y } = makeData(n, p, 20261201);
  for (let r = 0; r < before; r++) fit(x, y, options);
  const session = new Session();
  session.connect();
  const post = <T>(method: string, params: object = {}): Promise<T> =>
    new Promise((resolve, reject) => session.post(method, params, (error, result) => (error ? reject(error) : resolve(result as T))));
  await post("HeapProfiler.enable");
  await post("HeapProfiler.startSampling", { samplingInterval: 1024, includeObjectsCollectedByMajorGC: true, includeObjectsCollectedByMinorGC: true });
  fit(x, y, options);
  const { profile } = await post<{ profile: { head: HeapNode } }>("HeapProfiler.stopSampling");
  session.disconnect();
  const bytes = new Map<string, number>();
  let total = 0;
  const walk = (node: HeapNode): void => {
    const f = node.callFrame;
    const key = `${f.functionName || "(anonymous)"} ${f.url ? `${f.url.split("/").pop()}:${f.lineNumber + 1}` : "(V8)"}`;
    total += node.selfSize;
    if (node.selfSize > 0) bytes.set(key, (bytes.get(key) ?? 0) + node.selfSize);
    for (const child of node.children) walk(child);
  };
  walk(profile.head);
  console.log(`${name}, fit ${before + 1} of the process: ${(total / 1e6).toFixed(1)} MB allocated`);
  for (const [key, size] of [...bytes.entries()].sort((a, b) => b[1] - a[1]).slice(0, top)) {
    console.log(`${(size / 1e6).toFixed(2).padStart(8)} MB  ${key}`);
  }
}

void main();
