/**
 * `--threads`: the command fits the folds and mixes on worker threads and prints exactly what the
 * single-threaded command prints (the pooled fit is bit-identical: test/engine/parallel.test.ts).
 */
import { runCommand, runCommandAsync } from "../../engine/cli/fit";

/** 60 rows: y = 3 + 2a − b + noise, with a third predictor unrelated to y. */
function csv(): string {
  const lines = ["a,b,c,y"];
  for (let i = 1; i <= 60; i++) {
    const a = (i * 7) % 11;
    const b = (i * 5) % 13;
    const c = (i * 3) % 7;
    lines.push(`${a},${b},${c},${(3 + 2 * a - b + (((i * 37) % 17) / 17 - 0.5)).toFixed(4)}`);
  }
  return lines.join("\n") + "\n";
}

test("--threads 2 prints the same report and JSON as the single-threaded command", async () => {
  const read = (): string => csv();
  for (const format of [[], ["--json"]]) {
    const single = runCommand(["data.csv", "--target", "y", "--folds", "5", ...format], read);
    const pooled = await runCommandAsync(["data.csv", "--target", "y", "--folds", "5", "--threads", "2", ...format], read);
    expect(single.exitCode).toBe(0);
    expect(pooled).toEqual(single);
  }
});

test("bad input with --threads fails the same way (exit 2, the engine's message)", async () => {
  const read = (): string => "a,y\n1,5\n2,5\n3,5\n4,5\n5,5\n6,5\n";
  const single = runCommand(["data.csv", "--target", "y", "--folds", "3"], read);
  const pooled = await runCommandAsync(["data.csv", "--target", "y", "--folds", "3", "--threads", "2"], read);
  expect(single.exitCode).toBe(2);
  expect(pooled).toEqual(single);
});
