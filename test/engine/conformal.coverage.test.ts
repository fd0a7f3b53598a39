/**
 * Coverage of CV+ prediction intervals on fresh rows, by seeded simulation.
 *
 * Source of the bound: Barber, Candès, Ramdas & Tibshirani (2021), "Predictive inference with the
 * jackknife+", Annals of Statistics 49(1), K-fold CV+ theorem: for exchangeable rows and a fixed
 * fitting procedure, P(y_new ∈ interval) ≥ 1 − 2α − min{2(1 − 1/K)/(n/K + 1), (1 − K/n)/(K + 1)}.
 * The constant is from memory (/work/shared/references.md marks it so), so the test asserts the
 * looser form, 1 − 2α − max{…} of the two terms. Shrinkwise chooses the strength on the same data,
 * which the theorem does not cover; the test measures whether the bound still holds in practice.
 * The measured coverage (printed) is what the README reports.
 *
 * Designs: n from 60 to 500, p < n and p > n, normal and heavy-tailed noise (Student t with 3
 * degrees of freedom, as a normal over √(χ²₃/3)), sparse true coefficients; 10 folds, seed 1.
 */
import { readFileSync } from "fs";
import { join } from "path";
import { predictionIntervals } from "../../engine/conformal";
import { fit } from "../../engine/fit";
import { fromRows } from "../../engine/matrix";
import { TestRandom } from "../helpers/random";

interface Design {
  name: string;
  /** The design's row in the README's coverage table. */
  readme: string;
  n: number;
  p: number;
  noise: "normal" | "t3";
  mixes: number[];
}

const DESIGNS: Design[] = [
  { name: "n=60, p=8, normal", readme: "60 rows, 8 predictors, normal noise", n: 60, p: 8, noise: "normal", mixes: [0, 0.5, 1] },
  { name: "n=150, p=20, t(3)", readme: "150 rows, 20 predictors, t (3 df) noise", n: 150, p: 20, noise: "t3", mixes: [0, 0.5, 1] },
  { name: "n=80, p=150, t(3)", readme: "80 rows, 150 predictors, t (3 df) noise", n: 80, p: 150, noise: "t3", mixes: [0.5, 1] },
  { name: "n=500, p=40, t(3)", readme: "500 rows, 40 predictors, t (3 df) noise", n: 500, p: 40, noise: "t3", mixes: [0, 1] },
];
const LEVELS = [0.8, 0.9, 0.95];
const REPLICATES = 4;
const FRESH = 300;
const K = 10;

function noise(random: TestRandom, kind: "normal" | "t3"): number {
  const z = random.normal();
  if (kind === "normal") return z;
  let chi = 0;
  for (let d = 0; d < 3; d++) chi += random.normal() ** 2;
  return z / Math.sqrt(chi / 3);
}

function draw(random: TestRandom, rows: number, design: Design, beta: number[]): { x: number[][]; y: number[] } {
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < rows; i++) {
    const row = Array.from({ length: design.p }, () => random.normal());
    x.push(row);
    y.push(3 + row.reduce((s, v, j) => s + v * beta[j], 0) + noise(random, design.noise));
  }
  return { x, y };
}

function theoremBound(level: number, n: number): number {
  const alpha = 1 - level;
  const first = (2 * (1 - 1 / K)) / (n / K + 1);
  const second = (1 - K / n) / (K + 1);
  return 1 - 2 * alpha - Math.max(first, second);
}

test("CV+ coverage on fresh rows stays above the K-fold theorem's bound", () => {
  const lines: string[] = ["design | level | measured coverage | bound asserted | mean width"];
  const readme = readFileSync(join(__dirname, "..", "..", "README.md"), "utf8");
  for (const [d, design] of DESIGNS.entries()) {
    const covered = LEVELS.map(() => 0);
    const widths = LEVELS.map(() => 0);
    for (let r = 0; r < REPLICATES; r++) {
      const random = new TestRandom(1000 * d + r);
      const beta = Array.from({ length: design.p }, (_, j) => (j < 5 ? [2, -1.5, 1, 0.5, -0.5][j] : 0));
      const train = draw(random, design.n, design, beta);
      const fresh = draw(random, FRESH, design, beta);
      const result = fit(train.x, train.y, { mixes: design.mixes, folds: K, seed: 1 });
      const rows = fromRows(fresh.x);
      LEVELS.forEach((level, l) => {
        const { low, high } = predictionIntervals(result, rows, level);
        for (let t = 0; t < FRESH; t++) {
          if (fresh.y[t] >= low[t] && fresh.y[t] <= high[t]) covered[l]++;
          widths[l] += high[t] - low[t];
        }
      });
    }
    // The README's coverage table shows these measured figures.
    expect(readme).toContain(`| ${design.readme} | ${covered.map((c) => (c / (REPLICATES * FRESH)).toFixed(3)).join(" | ")} |`);
    LEVELS.forEach((level, l) => {
      const coverage = covered[l] / (REPLICATES * FRESH);
      const bound = theoremBound(level, design.n);
      lines.push(`${design.name} | ${level} | ${coverage.toFixed(3)} | ${bound.toFixed(3)} | ${(widths[l] / (REPLICATES * FRESH)).toFixed(2)}`);
      expect(coverage).toBeGreaterThanOrEqual(bound);
      // Not a theorem, a check that the intervals are neither broken nor trivially wide: the
      // paper's simulations find CV+ coverage near the nominal level (from memory); 0.05 either
      // side of 1 − α leaves room for the 1,200 fresh rows' sampling error (SD ≤ 0.015).
      expect(Math.abs(coverage - level)).toBeLessThan(0.05);
    });
  }
  console.log(lines.join("\n"));
});
