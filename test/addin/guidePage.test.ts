/**
 * addin/guidePage.js: the guide's Markdown → the built page. Checked here without a browser:
 * the Markdown the guide uses becomes the expected HTML, text is escaped, heading ids follow
 * GitHub's rule (so the guide's #links work in both places), the page carries a policy that
 * allows no script and hashes its one style block, and a missing picture stops the build.
 * The page in Chromium, opened from the pane's link: test/browser/about.test.ts.
 *
 * Sources: heading ids as GitHub renders Markdown (common practice; the README's own #links rely
 * on it); the style hash as CSP Level 3 defines hash sources (base64 of the SHA-256 of the
 * element's text), recomputed here with Node's crypto.
 */
import { createHash } from "crypto";
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";

// eslint-disable-next-line @typescript-eslint/no-require-imports
const guidePage = require("../../addin/guidePage.js") as {
  slug(text: string): string;
  renderMarkdown(markdown: string, available?: Set<string>): { html: string; headings: { level: number; text: string; id: string }[]; images: string[]; links: string[] };
  guideHtml(markdown: string, options?: { available?: Set<string>; version?: string }): { page: string; policy: string };
  guideFiles(options?: { guide?: string; images?: string; version?: string }): { files: Map<string, string | Buffer> };
  writeGuide(outDir: string, options?: { guide?: string; images?: string; version?: string }): string[];
  PAGE: string;
};

describe("the guide's Markdown → HTML", () => {
  test("heading ids as GitHub makes them (common practice)", () => {
    expect(guidePage.slug("Yes/no targets")).toBe("yesno-targets");
    expect(guidePage.slug("SHRINK.PREDICT")).toBe("shrinkpredict");
    expect(guidePage.slug("`#VALUE!` and `#N/A`: messages")).toBe("value-and-na-messages");
    expect(guidePage.slug("Step 2: pick the ranges")).toBe("step-2-pick-the-ranges");
    const { headings } = guidePage.renderMarkdown("## Notes\n\ntext\n\n## Notes\n");
    expect(headings.map((h) => h.id)).toEqual(["notes", "notes-1"]);
  });

  test("blocks: headings, paragraphs, lists, tables, fenced code", () => {
    const { html } = guidePage.renderMarkdown(
      ["# Title", "", "One line", "and its wrap.", "", "- first", "  wrapped", "- second", "", "| a | b |", "|---|---|", "| 1 | 2 |", "", "```", "x < y", "```"].join("\n"),
    );
    expect(html).toBe(
      [
        '<h1 id="title">Title</h1>',
        "<p>One line and its wrap.</p>",
        "<ul>\n<li>first wrapped</li>\n<li>second</li>\n</ul>",
        '<div class="table"><table><thead><tr><th scope="col">a</th><th scope="col">b</th></tr></thead><tbody>\n<tr><td>1</td><td>2</td></tr>\n</tbody></table></div>',
        "<pre><code>x &lt; y</code></pre>",
      ].join("\n"),
    );
  });

  test("inline: code, links, bold, italics, bare https addresses; text and code are escaped", () => {
    const { html, links } = guidePage.renderMarkdown("Press **Fit**, see *Settings* and [the list](#settings), `a<b & \"c\"`, 1 < 2, at https://localhost:3000/taskpane.html.");
    expect(html).toBe(
      '<p>Press <strong>Fit</strong>, see <em>Settings</em> and <a href="#settings">the list</a>, <code>a&lt;b &amp; &quot;c&quot;</code>, 1 &lt; 2, at <a href="https://localhost:3000/taskpane.html">https://localhost:3000/taskpane.html</a>.</p>',
    );
    expect(links).toEqual(["#settings"]);
    expect(guidePage.renderMarkdown("<script>alert(1)</script>").html).toBe("<p>&lt;script&gt;alert(1)&lt;/script&gt;</p>");
  });

  test("a light picture with a dark twin is shown in the reader's theme", () => {
    const available = new Set(["fit-light.png", "fit-dark.png", "solo-light.png"]);
    const { html, images } = guidePage.renderMarkdown("![The fit](img/fit-light.png)\n\n![Alone](img/solo-light.png)", available);
    expect(html).toBe(
      [
        '<p><picture><source srcset="img/fit-dark.png" media="(prefers-color-scheme: dark)"><img src="img/fit-light.png" alt="The fit" loading="lazy"></picture></p>',
        '<p><img src="img/solo-light.png" alt="Alone" loading="lazy"></p>',
      ].join("\n"),
    );
    expect(images).toEqual(["img/fit-light.png", "img/solo-light.png"]);
  });
});

describe("the built page", () => {
  test("a policy without scripts or connections, and the hash of its one style block (CSP Level 3 hash source)", () => {
    const { page, policy } = guidePage.guideHtml("# Guide\n\nText.", { version: "9.8.7" });
    expect(policy).toContain("default-src 'self'");
    expect(policy).toContain("script-src 'none'");
    expect(policy).toContain("connect-src 'none'");
    expect(policy).not.toMatch(/unsafe-/);
    expect(page).toContain(`<meta http-equiv="Content-Security-Policy" content="${policy}">`);
    expect(page).not.toMatch(/<script/i);
    expect(page).not.toMatch(/ style=/i);
    const styles = [...page.matchAll(/<style>([\s\S]*?)<\/style>/g)].map((m) => m[1]);
    expect(styles).toHaveLength(1);
    const hash = createHash("sha256").update(styles[0], "utf8").digest("base64");
    expect(policy).toContain(`style-src 'sha256-${hash}'`);
    expect(page).toContain("<title>Guide</title>");
    expect(page).toContain("Shrinkwise 9.8.7");
  });

  test("the real guide: the page and every picture in docs/img, under guide/", () => {
    const { files } = guidePage.guideFiles();
    expect(guidePage.PAGE).toBe("guide/index.html");
    const names = [...files.keys()];
    expect(names[0]).toBe("guide/index.html");
    expect(names.filter((name) => name.startsWith("guide/img/") && name.endsWith(".png")).length).toBeGreaterThanOrEqual(2);
    expect(names.every((name) => name.startsWith("guide/"))).toBe(true);
  });

  test("a picture the guide links but docs/img lacks stops the build, naming it", () => {
    const dir = mkdtempSync(join(tmpdir(), "guide-page-"));
    try {
      mkdirSync(join(dir, "img"));
      writeFileSync(join(dir, "img", "here-light.png"), "not really a png");
      writeFileSync(join(dir, "guide.md"), "# G\n\n![here](img/here-light.png)\n\n![gone](img/gone-light.png)\n");
      expect(() => guidePage.guideFiles({ guide: join(dir, "guide.md"), images: join(dir, "img"), version: "1.0.0" })).toThrow(
        "docs/guide.md links the picture 'img/gone-light.png', which is not in docs/img",
      );
      writeFileSync(join(dir, "guide.md"), "# G\n\n![here](img/here-light.png)\n");
      const written = guidePage.writeGuide(join(dir, "out"), { guide: join(dir, "guide.md"), images: join(dir, "img"), version: "1.0.0" });
      expect(written.map((file) => file.slice(dir.length))).toEqual(["/out/guide/index.html", "/out/guide/img/here-light.png"]);
      expect(readFileSync(join(dir, "out", "guide", "img", "here-light.png"), "utf8")).toBe("not really a png");
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
