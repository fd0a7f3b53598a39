/**
 * The offline checks of an XML manifest, shared by the development manifest (manifest.xml, dev
 * server) and the manifest a hosted build writes (addin/hosting.js hostedManifest, under the
 * --base-url): test/addin/manifest.test.ts runs them on both.
 * 1. well-formed: `xmllint --noout` where /usr/bin/xmllint exists (Debian libxml2-utils; CI installs
 *    it and requires this check), and always a strict parse by office-addin-manifest's own XML reader;
 * 2. read by office-addin-manifest's `readManifestFile` (what `office-addin-manifest info` prints);
 * 3. structure: the facts Excel needs for cell functions in a shared runtime (namespace, requirement
 *    sets, the one resource id shared by Runtime, Page, FunctionFile and the pane button), every
 *    resource id defined, every URL https and under the base, icons present at the declared sizes,
 *    permissions exactly the level justified in the manifest's comment.
 * Sources: the Office Add-ins XML manifest reference and "Configure your Office Add-in to use a
 * shared runtime" (learn.microsoft.com/office/dev/add-ins), summarised in /work/shared/platform.md.
 */
import { execFileSync } from "child_process";
import { existsSync, readFileSync } from "fs";
import { join } from "path";
import { suiteGate, XMLLINT, xmllintNeed } from "../helpers/requirements";

// office-addin-manifest's reader reaches two modules whose import chains end in ESM-only files, which
// jest on Node 20 cannot load: `uuid` (used only when rewriting a manifest's id) and
// `@microsoft/app-manifest` (used only for JSON manifests). Neither is used on an XML manifest.
jest.mock("uuid", () => ({ v4: () => "00000000-0000-4000-8000-000000000000" }));
jest.mock("@microsoft/app-manifest", () => ({}));
// eslint-disable-next-line @typescript-eslint/no-require-imports
const { OfficeAddinManifest } = require("office-addin-manifest/lib/manifestOperations") as {
  OfficeAddinManifest: { readManifestFile(path: string): Promise<Record<string, unknown>> };
};
// eslint-disable-next-line @typescript-eslint/no-require-imports
const { ManifestHandlerXml } = require("office-addin-manifest/lib/manifestHandler/manifestHandlerXml") as {
  ManifestHandlerXml: new (path: string) => { parseXmlAsync(): Promise<XmlObject> };
};

export const ROOT = join(__dirname, "..", "..");
export const ASSETS = join(ROOT, "addin", "assets");

export interface ManifestUnderTest {
  /** Label for the describe blocks, e.g. "manifest.xml (dev server)". */
  label: string;
  /** The manifest file. */
  file: string;
  /** Every URL must start with this (ends in "/"): https://localhost:3000/ or the --base-url. */
  base: string;
  /** Where the icons the URLs name are found (addin/assets, or a build's assets/). */
  assets: string;
}

/** xml2js's default shape: child elements by name (arrays), attributes under `$`, text under `_`. */
type XmlObject = { $?: Record<string, string>; _?: string } & { [name: string]: unknown };

interface Element {
  name: string;
  attrs: Record<string, string>;
  text: string;
  children: Element[];
  /** Names from the root down to this element. */
  path: string[];
}

function toElement(name: string, value: unknown, path: string[]): Element {
  const here = [...path, name];
  if (typeof value === "string") return { name, attrs: {}, text: value, children: [], path: here };
  const object = value as XmlObject;
  const children: Element[] = [];
  for (const [key, child] of Object.entries(object)) {
    if (key === "$" || key === "_") continue;
    for (const item of child as unknown[]) children.push(toElement(key, item, here));
  }
  return { name, attrs: object.$ ?? {}, text: (object._ ?? "").trim(), children, path: here };
}

function all(root: Element, predicate: (e: Element) => boolean): Element[] {
  const out: Element[] = [];
  const visit = (e: Element): void => {
    if (predicate(e)) out.push(e);
    e.children.forEach(visit);
  };
  visit(root);
  return out;
}

function named(root: Element, name: string): Element[] {
  return all(root, (e) => e.name === name);
}

function only(root: Element, name: string): Element {
  const found = named(root, name);
  if (found.length !== 1) throw new Error(`expected one <${name}>, found ${found.length}`);
  return found[0];
}

function child(e: Element, name: string): Element {
  const found = e.children.filter((c) => c.name === name);
  if (found.length !== 1) throw new Error(`expected one <${name}> in <${e.name}>, found ${found.length}`);
  return found[0];
}

/** The one CustomFunctions extension point. */
function customFunctions(root: Element): Element {
  const points = all(root, (e) => e.name === "ExtensionPoint" && e.attrs["xsi:type"] === "CustomFunctions");
  if (points.length !== 1) throw new Error(`expected one CustomFunctions extension point, found ${points.length}`);
  return points[0];
}

/** Width and height from a PNG file's IHDR chunk (PNG spec: signature, then IHDR first). */
function pngSize(file: string): { width: number; height: number } {
  const bytes = readFileSync(file);
  const signature = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
  if (!bytes.subarray(0, 8).equals(signature)) throw new Error(`${file} is not a PNG file`);
  if (bytes.toString("ascii", 12, 16) !== "IHDR") throw new Error(`${file}: IHDR is not the first chunk`);
  return { width: bytes.readUInt32BE(16), height: bytes.readUInt32BE(20) };
}

/** Registers the checks on one manifest (describe blocks; the manifest is parsed in beforeAll). */
export function describeManifestChecks({ label, file, base, assets }: ManifestUnderTest): void {
  const origin = new URL(base).origin;
  describe(label, () => {
    let root: Element;
    let resources: { images: Map<string, string>; urls: Map<string, string>; shortStrings: Map<string, string>; longStrings: Map<string, string> };

    beforeAll(async () => {
      const xml = await new ManifestHandlerXml(file).parseXmlAsync();
      root = toElement("OfficeApp", xml.OfficeApp, []);
      const table = (container: string, item: string): Map<string, string> =>
        new Map(named(only(root, container), item).map((e) => [e.attrs.id, e.attrs.DefaultValue]));
      resources = {
        images: table("bt:Images", "bt:Image"),
        urls: table("bt:Urls", "bt:Url"),
        shortStrings: table("bt:ShortStrings", "bt:String"),
        longStrings: table("bt:LongStrings", "bt:String"),
      };
    });

    describe("manifest.xml is well-formed", () => {
      // Without xmllint the strict parse below still runs.
      suiteGate("the xmllint check (test/addin/manifest.test.ts)", [xmllintNeed()]).test("xmllint --noout accepts it", () => {
        // Throws (non-zero exit) with xmllint's message on any well-formedness error.
        expect(() => execFileSync(XMLLINT, ["--noout", file], { stdio: "pipe" })).not.toThrow();
      });

      test("a strict XML parser accepts it and rejects a broken copy", async () => {
        expect(root.attrs["xsi:type"]).toBe("TaskPaneApp");
        // Guard that the parser is really strict: the same reader must fail on an unclosed element.
        const { mkdtempSync, writeFileSync } = await import("fs");
        const { tmpdir } = await import("os");
        const broken = join(mkdtempSync(join(tmpdir(), "shrinkwise-manifest-")), "broken.xml");
        writeFileSync(broken, readFileSync(file, "utf8").replace("</Permissions>", ""));
        await expect(new ManifestHandlerXml(broken).parseXmlAsync()).rejects.toThrow();
      });
    });

    describe("office-addin-manifest reads it", () => {
      test("readManifestFile returns our id, name, host, permissions and start page", async () => {
        const info = await OfficeAddinManifest.readManifestFile(file);
        expect(info.manifestType).toBe("xml");
        expect(info.officeAppType).toBe("TaskPaneApp");
        expect(info.id).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-4[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/);
        expect(info.version).toMatch(/^\d+\.\d+\.\d+\.\d+$/);
        expect(info.providerName).toBe("Shrinkwise");
        expect(info.displayName).toBe("Shrinkwise");
        expect(info.hosts).toEqual(["Workbook"]);
        expect(info.permissions).toBe("ReadWriteDocument");
        expect(info.defaultSettings).toEqual(expect.objectContaining({ sourceLocation: `${base}taskpane.html` }));
      });
    });

    describe("structure for cell functions in a shared runtime", () => {
      test("the functions' namespace is SHRINK", () => {
        const points = all(root, (e) => e.name === "ExtensionPoint" && e.attrs["xsi:type"] === "CustomFunctions");
        expect(points).toHaveLength(1);
        const namespace = child(points[0], "Namespace").attrs.resid;
        expect(resources.shortStrings.get(namespace)).toBe("SHRINK");
      });

      test("requires SharedRuntime 1.1 and CustomFunctionsRuntime 1.1 or later", () => {
        const sets = named(child(root, "Requirements"), "Set");
        const version = (name: string): number => Number(sets.find((s) => s.attrs.Name === name)?.attrs.MinVersion);
        expect(version("SharedRuntime")).toBe(1.1);
        expect(version("CustomFunctionsRuntime")).toBeGreaterThanOrEqual(1.1);
      });

      test("one long-lived runtime; Runtime, Page, FunctionFile and the pane button share its resid", () => {
        const runtimes = named(root, "Runtime");
        expect(runtimes).toHaveLength(1);
        expect(runtimes[0].attrs.lifetime).toBe("long");
        const shared = runtimes[0].attrs.resid;
        const functions = customFunctions(root);
        expect(child(child(functions, "Page"), "SourceLocation").attrs.resid).toBe(shared);
        expect(only(root, "FunctionFile").attrs.resid).toBe(shared);
        const actions = all(root, (e) => e.name === "Action" && e.attrs["xsi:type"] === "ShowTaskpane");
        expect(actions.length).toBeGreaterThanOrEqual(1);
        for (const action of actions) expect(child(action, "SourceLocation").attrs.resid).toBe(shared);
        // A shared runtime supports one task pane: every button opens the same TaskpaneId.
        expect(new Set(actions.map((a) => child(a, "TaskpaneId").text)).size).toBe(1);
        // The shared page is the pane's start page.
        expect(resources.urls.get(shared)).toBe(child(child(root, "DefaultSettings"), "SourceLocation").attrs.DefaultValue);
      });

      test("Runtimes comes first in the Host, before AllFormFactors and DesktopFormFactor", () => {
        const text = readFileSync(file, "utf8");
        const at = (tag: string): number => text.indexOf(tag);
        expect(at("<Host xsi:type=\"Workbook\">")).toBeGreaterThan(0);
        expect(at("<Runtimes>")).toBeGreaterThan(at("<Host xsi:type=\"Workbook\">"));
        expect(at("<AllFormFactors>")).toBeGreaterThan(at("</Runtimes>"));
        expect(at("<DesktopFormFactor>")).toBeGreaterThan(at("</AllFormFactors>"));
      });

      test("the functions' script and metadata are the bundle and functions.json under the base", () => {
        const functions = customFunctions(root);
        const url = (name: string): string | undefined => resources.urls.get(child(child(functions, name), "SourceLocation").attrs.resid);
        expect(url("Script")).toBe(`${base}functions.js`);
        expect(url("Metadata")).toBe(`${base}functions.json`);
      });

      test("every resid is defined in the right resource table, and every resource is used", () => {
        const referencing = all(root, (e) => e.attrs.resid !== undefined);
        expect(referencing.length).toBeGreaterThan(10);
        const used = new Set<string>();
        for (const e of referencing) {
          const id = e.attrs.resid;
          used.add(id);
          // The schema caps resource ids at 32 characters.
          expect(id.length).toBeLessThanOrEqual(32);
          // Images by image id; pages and links by URL id; descriptions (GetStarted, Supertip) are long
          // strings; labels, titles and the namespace are short strings.
          const table =
            e.name === "bt:Image"
              ? resources.images
              : ["Runtime", "SourceLocation", "FunctionFile", "LearnMoreUrl"].includes(e.name)
                ? resources.urls
                : e.name === "Description"
                  ? resources.longStrings
                  : resources.shortStrings;
          if (!table.has(id)) throw new Error(`<${e.name} resid="${id}"> (${e.path.join(" > ")}) is not defined in its resource table`);
        }
        const defined = [...resources.images.keys(), ...resources.urls.keys(), ...resources.shortStrings.keys(), ...resources.longStrings.keys()];
        expect(new Set(defined).size).toBe(defined.length);
        expect(defined.filter((id) => !used.has(id))).toEqual([]);
      });

      test("strings fit the schema's limits (short 125, long 250 characters)", () => {
        for (const [id, value] of resources.shortStrings) expect([id, value.length <= 125]).toEqual([id, true]);
        for (const [id, value] of resources.longStrings) expect([id, value.length <= 250]).toEqual([id, true]);
      });

      test("every URL is https and under the base, and AppDomains holds only the base's origin", () => {
        const urls = [
          ...all(root, (e) => typeof e.attrs.DefaultValue === "string" && /^[a-z]+:\/\//i.test(e.attrs.DefaultValue)).map((e) => e.attrs.DefaultValue),
          ...named(root, "AppDomain").map((e) => e.text),
        ];
        expect(urls.length).toBeGreaterThan(8);
        expect(base.startsWith("https://")).toBe(true);
        for (const url of urls.filter((u) => u !== origin)) expect([url, url.startsWith(base)]).toEqual([url, true]);
        // Nothing that looks like a URL hides elsewhere in attributes or text with another scheme.
        expect(readFileSync(file, "utf8")).not.toMatch(/http:\/\/(?!schemas\.microsoft\.com|www\.w3\.org)/);
        expect(named(root, "AppDomain").map((e) => e.text)).toEqual([origin]);
      });

      test("icons exist as PNGs of the declared sizes", () => {
        const icons: [string, number][] = [
          [child(root, "IconUrl").attrs.DefaultValue, 32],
          [child(root, "HighResolutionIconUrl").attrs.DefaultValue, 64],
        ];
        for (const image of named(root, "bt:Image").filter((e) => e.attrs.size)) {
          icons.push([resources.images.get(image.attrs.resid) as string, Number(image.attrs.size)]);
        }
        for (const [url, size] of icons) {
          expect(url.startsWith(`${base}assets/`)).toBe(true);
          const icon = join(assets, url.slice(`${base}assets/`.length));
          expect([url, existsSync(icon)]).toEqual([url, true]);
          expect([url, pngSize(icon)]).toEqual([url, { width: size, height: size }]);
        }
      });

      test("permissions are ReadWriteDocument, the level the manifest's comment justifies, and nothing else", () => {
        expect(child(root, "Permissions").text).toBe("ReadWriteDocument");
        const text = readFileSync(file, "utf8");
        expect(text.slice(0, text.indexOf("<Permissions>"))).toMatch(/ReadWriteDocument is the least level/);
      });
    });
  });
}
