/**
 * functions.json as the build makes it: the `custom-functions-metadata` generator (the same one
 * the webpack plugin runs) over functions/functions.ts, then the build's post-processing
 * (addin/webpack.config.js `postProcessMetadata`).
 *
 * Expected shapes come from the custom functions JSON metadata reference (learn.microsoft.com,
 * "Manually create JSON metadata for custom functions"): `dimensionality` is "matrix" for a
 * range and absent (scalar is the default) for one value; `options.cancelable` marks functions
 * that receive a CancelableInvocation; `allowErrorForDataTypeAny` is a top-level property.
 */
import { join } from "path";
import { generateCustomFunctionsMetadata, ICustomFunctionsMetadata, IFunction } from "custom-functions-metadata";
import { FUNCTIONS } from "../../functions/functions";

// eslint-disable-next-line @typescript-eslint/no-require-imports
const { postProcessMetadata } = require("../../addin/webpack.config.js") as { postProcessMetadata(text: string): string };

const SOURCE = join(__dirname, "..", "..", "functions", "functions.ts");

type Metadata = ICustomFunctionsMetadata & { allowErrorForDataTypeAny?: boolean; allowCustomDataForDataTypeAny?: boolean };

/** Parameter name → "matrix" | "scalar" (+ "?" when optional), in order. */
const EXPECTED: Record<string, { cancelable: boolean; parameters: string[] }> = {
  COEFS: { cancelable: true, parameters: ["target:matrix", "predictors:matrix", "mixes:matrix?", "settings:matrix?"] },
  CHOICE: { cancelable: true, parameters: ["target:matrix", "predictors:matrix", "mixes:matrix?", "settings:matrix?"] },
  PREDICT: {
    cancelable: true,
    parameters: ["target:matrix", "predictors:matrix", "new_rows:matrix", "mixes:matrix?", "settings:matrix?"],
  },
  APPLY: { cancelable: false, parameters: ["coefficient_table:matrix", "new_rows:matrix"] },
  PATH: { cancelable: true, parameters: ["target:matrix", "predictors:matrix", "mix:scalar?", "settings:matrix?"] },
  CVCURVE: { cancelable: true, parameters: ["target:matrix", "predictors:matrix", "mixes:matrix?", "settings:matrix?"] },
  KEPT: { cancelable: true, parameters: ["target:matrix", "predictors:matrix", "mixes:matrix?", "settings:matrix?"] },
  SCORE: { cancelable: false, parameters: ["actual:matrix", "predicted:matrix", "settings:matrix?"] },
  BASELINE: { cancelable: true, parameters: ["target:matrix", "predictors:matrix", "settings:matrix?"] },
};

let raw: Metadata;
let metadata: Metadata;
let associate: { functionName: string; id: string }[];

beforeAll(async () => {
  const generated = await generateCustomFunctionsMetadata(SOURCE);
  expect(generated.errors).toEqual([]);
  raw = JSON.parse(generated.metadataJson) as Metadata;
  metadata = JSON.parse(postProcessMetadata(generated.metadataJson)) as Metadata;
  associate = generated.associate;
});

function find(id: string): IFunction {
  const found = metadata.functions.find((f) => f.id === id);
  if (!found) throw new Error(`${id} is not in functions.json`);
  return found;
}

test("every SHRINK function is listed once, with id and name equal", () => {
  expect(metadata.functions.map((f) => f.id).sort()).toEqual(Object.keys(EXPECTED).sort());
  for (const f of metadata.functions) expect(f.name).toBe(f.id);
});

test.each(Object.keys(EXPECTED))("%s: parameters, dimensionality, optional flags, cancelable, matrix result", (id) => {
  const f = find(id);
  const shape = f.parameters.map((p) => `${p.name}:${p.dimensionality ?? "scalar"}${p.optional ? "?" : ""}`);
  expect(shape).toEqual(EXPECTED[id].parameters);
  // `any` everywhere: Excel converts nothing, so blanks, text and errors reach the function as they are.
  for (const p of f.parameters) expect(p.type).toBe("any");
  expect(Boolean(f.options?.cancelable)).toBe(EXPECTED[id].cancelable);
  expect(f.options?.stream).toBeUndefined();
  expect(f.options?.volatile).toBeUndefined();
  expect(f.result?.dimensionality).toBe("matrix");
});

test("every function and parameter has a one-line description for the user", () => {
  for (const f of metadata.functions) {
    expect([f.id, typeof f.description === "string" && f.description.length > 20]).toEqual([f.id, true]);
    expect(f.description).not.toMatch(/\n/);
    for (const p of f.parameters) {
      const text = p.description ?? "";
      expect([f.id, p.name, text.length > 10]).toEqual([f.id, p.name, true]);
      expect(text).not.toMatch(/\n/);
      // Parameter descriptions are capped at 512 characters by the custom-functions metadata schema.
      expect(text.length).toBeLessThanOrEqual(512);
    }
  }
});

test("post-processing sets allowErrorForDataTypeAny at the top level (the generator does not)", () => {
  expect(raw.allowErrorForDataTypeAny).toBeUndefined();
  expect(metadata.allowErrorForDataTypeAny).toBe(true);
  // Everything else is kept as generated.
  expect(metadata.allowCustomDataForDataTypeAny).toBe(raw.allowCustomDataForDataTypeAny);
  expect(metadata.functions.map((f) => f.parameters.length)).toEqual(raw.functions.map((f) => f.parameters.length));
});

test("functions.ts registers exactly the generated ids with the functions the generator names", () => {
  const registered = (globalThis as unknown as { CustomFunctions: { __associations: Map<string, unknown> } }).CustomFunctions
    .__associations;
  expect([...registered.keys()].sort()).toEqual(metadata.functions.map((f) => f.id).sort());
  for (const { id, functionName } of associate) {
    const implementation = FUNCTIONS[id as keyof typeof FUNCTIONS];
    expect(registered.get(id)).toBe(implementation);
    expect(implementation.name).toBe(functionName);
  }
});
