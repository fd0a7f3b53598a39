/**
 * The README's "Large files" example (addin/demo/generateSensorLog.ts, then the DuckDB route of
 * the command line): the numbers the README quotes are what the commands print. The log's true
 * model (stated in the generator and the README) is recovered to about 1% (its noise allows that
 * on 524,502 rows), and the generator writes the same rows for the same seed.
 */
import { mkdtempSync, readFileSync, rmSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import { sensorLogCsv, writeSensorLog } from "../../addin/demo/generateSensorLog";
import { runCommandAsync } from "../../engine/cli/fit";

const README = readFileSync(join(__dirname, "..", "..", "README.md"), "utf8");

test("the generator is deterministic", () => {
  expect(sensorLogCsv(500)).toBe(sensorLogCsv(500));
  expect(sensorLogCsv(500, 7)).not.toBe(sensorLogCsv(500));
});

test("the README's sensor-log example prints what the README says", async () => {
  const folder = mkdtempSync(join(tmpdir(), "shrinkwise-sensor-readme-"));
  try {
    const file = join(folder, "sensor-log.parquet");
    await writeSensorLog(file);
    const command = "--target roast_loss --time-column minute --folds 5 --exclude batch_id";
    expect(README).toContain(`npm run fit -- sensor-log.parquet ${command}`);
    const outcome = await runCommandAsync([file, ...command.split(" ")]);
    expect(outcome.stderr).toBe("");
    expect(outcome.exitCode).toBe(0);
    const out = outcome.stdout;
    const coefficient = (term: string): number => Number(new RegExp(`^  ${term.replace(/[:]/g, "\\:")}\\s+(\\S+)`, "m").exec(out)?.[1]);
    // Four significant digits, as the README quotes them.
    const quoted: [string, string][] = [
      ["drum_temp", "0.03993"],
      ["airflow", "−0.02976"],
      ["gas_pressure", "0.5993"],
      ["roast_level: dark", "1.199"],
      ["roast_level: light", "−0.7986"],
    ];
    for (const [term, text] of quoted) {
      expect(README).toContain(`${term.includes(":") ? `\`${term}\`` : term} ${text}`);
      expect(Number(coefficient(term).toPrecision(4))).toBe(Number(text.replace("−", "-")));
    }
    expect(coefficient("exhaust_temp")).toBe(0);
    expect(out).toContain("Rows: 524502 used, 1098 skipped");
    expect(README).toContain("524,502 rows used, 1,098 skipped");
    expect(out).toContain("Cross-validation: 5 time-ordered folds");
    // The true model (generator): within 1% of each effect.
    expect(Math.abs(coefficient("drum_temp") - 0.04) / 0.04).toBeLessThan(0.01);
    expect(Math.abs(coefficient("gas_pressure") - 0.6) / 0.6).toBeLessThan(0.01);
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
}, 300_000);
