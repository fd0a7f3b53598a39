/**
 * No import cycles among the add-in's own modules (engine/, functions/, taskpane/), type-only
 * imports included: a cycle makes the order modules start in depend on which one is loaded
 * first, and blurs which part of the pane depends on which. Relative imports only; packages
 * are not followed.
 */
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { dirname, join, relative, resolve } from "path";

const ROOT = resolve(__dirname, "..", "..");

function sources(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((entry) => {
    const path = join(dir, entry.name);
    if (entry.isDirectory()) return sources(path);
    return entry.name.endsWith(".ts") ? [path] : [];
  });
}

/** Relative import and export specifiers of a file, resolved to .ts files. */
function importsOf(file: string): string[] {
  const text = readFileSync(file, "utf8");
  const found: string[] = [];
  for (const match of text.matchAll(/(?:\bfrom|\bimport)\s*\(?\s*["'](\.{1,2}\/[^"']+)["']/g)) {
    const target = resolve(dirname(file), match[1]);
    const candidate = [`${target}.ts`, join(target, "index.ts")].find((path) => existsSync(path));
    if (candidate) found.push(candidate);
  }
  return found;
}

/** Every cycle met by a depth-first walk, each as a list of paths relative to the project. */
function cycles(files: string[]): string[][] {
  const graph = new Map(files.map((file) => [file, importsOf(file)]));
  const state = new Map<string, "open" | "done">();
  const stack: string[] = [];
  const found: string[][] = [];
  const visit = (file: string): void => {
    state.set(file, "open");
    stack.push(file);
    for (const next of graph.get(file) ?? []) {
      if (state.get(next) === "open") found.push([...stack.slice(stack.indexOf(next)), next].map((path) => relative(ROOT, path)));
      else if (!state.has(next)) visit(next);
    }
    stack.pop();
    state.set(file, "done");
  };
  for (const file of files) if (!state.has(file)) visit(file);
  return found;
}

test("the walk sees a cycle made only of a type import (so the check below can fail)", () => {
  const dir = mkdtempSync(join(tmpdir(), "shrinkwise-cycles-"));
  try {
    writeFileSync(join(dir, "start.ts"), 'import { preview } from "./parts/preview";\nexport interface Help { id: string }\n');
    mkdirSync(join(dir, "parts"));
    writeFileSync(join(dir, "parts", "preview.ts"), 'import type { Help } from "../start";\nexport const preview = (h: Help) => h.id;\n');
    writeFileSync(join(dir, "alone.ts"), 'import { preview } from "./parts/preview";\n');
    const found = cycles(sources(dir)).map((cycle) => cycle.map((path) => relative(dir, join(ROOT, path))));
    expect(found).toHaveLength(1); // alone.ts imports into the cycle but is not part of it
    expect(found[0][0]).toBe(found[0][found[0].length - 1]); // a cycle closes on its first file
    expect([...new Set(found[0])].sort()).toEqual([join("parts", "preview.ts"), "start.ts"]);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
});

test("engine/, functions/ and taskpane/ import no module that imports them back", () => {
  const files = ["engine", "functions", "taskpane"].flatMap((dir) => sources(join(ROOT, dir)));
  expect(files.length).toBeGreaterThan(30);
  expect(cycles(files).map((cycle) => cycle.join(" -> "))).toEqual([]);
});
