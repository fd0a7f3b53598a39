/**
 * CHANGELOG.md keeps one layout, so people and tools can read it: a `# Changelog` title, then
 * `## [Unreleased]` and `## [x.y.z] - YYYY-MM-DD` sections, newest first (the Keep a Changelog
 * layout: common practice), each with `### Added` / `Changed` / `Deprecated` / `Removed` / `Fixed`
 * / `Security` groups of `- ` items. package.json's version must have its entry, so a version bump
 * without a changelog entry fails here.
 */
import { readFileSync } from "fs";
import { join } from "path";

const ROOT = join(__dirname, "..", "..");
const CHANGELOG = readFileSync(join(ROOT, "CHANGELOG.md"), "utf8");
const VERSION = (JSON.parse(readFileSync(join(ROOT, "package.json"), "utf8")) as { version: string }).version;

/** Change kinds, in the order Keep a Changelog lists them. */
const KINDS = ["Added", "Changed", "Deprecated", "Removed", "Fixed", "Security"];

interface Release {
  name: string;
  date: string | null;
  line: number;
  groups: { kind: string; items: number; line: number }[];
}

/** The releases with their groups; throws on a level-2 or level-3 heading out of the layout. */
function releases(text: string): Release[] {
  const found: Release[] = [];
  text.split("\n").forEach((line, index) => {
    const at = index + 1;
    if (line.startsWith("## ")) {
      const heading = /^## \[(Unreleased|\d+\.\d+\.\d+)\](?: - (\d{4}-\d{2}-\d{2}))?$/.exec(line);
      if (!heading) throw new Error(`line ${at}: '${line}' is not '## [Unreleased]' or '## [x.y.z] - YYYY-MM-DD'`);
      found.push({ name: heading[1], date: heading[2] ?? null, line: at, groups: [] });
    } else if (line.startsWith("### ")) {
      const kind = line.slice(4);
      const release = found[found.length - 1];
      if (!release) throw new Error(`line ${at}: '${line}' comes before any version`);
      if (!KINDS.includes(kind)) throw new Error(`line ${at}: '${kind}' is not one of ${KINDS.join(", ")}`);
      release.groups.push({ kind, items: 0, line: at });
    } else if (line.startsWith("- ")) {
      const release = found[found.length - 1];
      const group = release?.groups[release.groups.length - 1];
      if (!group) throw new Error(`line ${at}: an item outside a group (### Added, …)`);
      group.items++;
    } else if (/^#{1,6} /.test(line) && !(index === 0 && line === "# Changelog")) {
      throw new Error(`line ${at}: '${line}' is a heading the layout does not have`);
    }
  });
  return found;
}

function compareVersions(a: string, b: string): number {
  const [x, y] = [a.split(".").map(Number), b.split(".").map(Number)];
  for (let k = 0; k < 3; k++) if (x[k] !== y[k]) return x[k] - y[k];
  return 0;
}

describe("CHANGELOG.md", () => {
  const list = releases(CHANGELOG);

  test("starts with the title, then Unreleased first", () => {
    expect(CHANGELOG.split("\n")[0]).toBe("# Changelog");
    expect(list[0]?.name).toBe("Unreleased");
    expect(list[0]?.date).toBeNull();
    expect(list.filter((release) => release.name === "Unreleased")).toHaveLength(1);
  });

  test("package.json's version has an entry with a date", () => {
    const entry = list.find((release) => release.name === VERSION);
    expect(entry).toBeDefined();
    expect(entry!.date).not.toBeNull();
  });

  test("released versions: each once, dated with a real date, newest first", () => {
    const released = list.filter((release) => release.name !== "Unreleased");
    expect(released.length).toBeGreaterThan(0);
    expect(new Set(released.map((r) => r.name)).size).toBe(released.length);
    for (const release of released) {
      expect([release.name, release.date]).toEqual([release.name, expect.stringMatching(/^\d{4}-\d{2}-\d{2}$/)]);
      const date = new Date(`${release.date}T00:00:00Z`);
      expect(date.toISOString().slice(0, 10)).toBe(release.date);
    }
    for (let k = 1; k < released.length; k++) {
      expect(compareVersions(released[k - 1].name, released[k].name)).toBeGreaterThan(0);
      expect(released[k - 1].date! >= released[k].date!).toBe(true);
    }
  });

  test("every version has groups of the known kinds, each kind once, in the usual order, none empty", () => {
    for (const release of list) {
      expect([release.name, release.groups.length > 0]).toEqual([release.name, true]);
      const kinds = release.groups.map((group) => group.kind);
      expect(kinds).toEqual([...new Set(kinds)].sort((a, b) => KINDS.indexOf(a) - KINDS.indexOf(b)));
      for (const group of release.groups) expect([release.name, group.kind, group.items > 0]).toEqual([release.name, group.kind, true]);
    }
  });

  test("the layout check itself refuses what it should (examples made up here)", () => {
    expect(() => releases("# Changelog\n\n## 1.0.0\n")).toThrow("is not '## [Unreleased]'");
    expect(() => releases("# Changelog\n\n## [1.0.0] - 2026-01-01\n\n### Improved\n\n- x\n")).toThrow("'Improved' is not one of");
    expect(() => releases("# Changelog\n\n## [1.0.0] - 2026-01-01\n\n- x\n")).toThrow("an item outside a group");
    expect(releases("# Changelog\n\n## [Unreleased]\n\n### Fixed\n\n- x\n- y\n")).toEqual([{ name: "Unreleased", date: null, line: 3, groups: [{ kind: "Fixed", items: 2, line: 5 }] }]);
  });
});
