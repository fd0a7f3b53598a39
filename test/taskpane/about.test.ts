/**
 * The pane's version line and guide address (taskpane/about.ts). The footer itself is checked in
 * Chromium (test/browser/about.test.ts); these are the plain functions behind it.
 */
import { readFileSync } from "fs";
import { join } from "path";
import { GUIDE_PATH, guideUrl, VERSION, versionText } from "../../taskpane/about";

describe("about: version and guide link", () => {
  test("the version is package.json's (source: the file itself)", () => {
    const pkg = JSON.parse(readFileSync(join(__dirname, "..", "..", "package.json"), "utf8")) as { version: string };
    expect(VERSION).toBe(pkg.version);
    expect(versionText()).toBe(`Shrinkwise ${pkg.version}`);
  });

  test("the guide is beside the page, on the page's origin, under any base path (URL resolution: WHATWG URL standard)", () => {
    expect(GUIDE_PATH).toBe("guide/index.html");
    expect(guideUrl("https://localhost:3000/taskpane.html")).toBe("https://localhost:3000/guide/index.html");
    expect(guideUrl("https://files.example/tools/shrinkwise/taskpane.html?_host_Info=Excel")).toBe("https://files.example/tools/shrinkwise/guide/index.html");
    expect(guideUrl("http://127.0.0.1:4321/shrinkwise/")).toBe("http://127.0.0.1:4321/shrinkwise/guide/index.html");
  });
});
