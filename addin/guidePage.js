/* global require, module, __dirname, Buffer */
/* eslint-disable @typescript-eslint/no-require-imports -- plain CommonJS, loaded by the webpack config and by tests */
/**
 * The user guide as a page of the built add-in: docs/guide.md → dist/guide/index.html, its
 * pictures (docs/img/*.png) → dist/guide/img/. The pane links to it (taskpane/about.ts), on the
 * add-in's own origin.
 *
 * The Markdown is turned into HTML here, by a small converter of our own for what the guide uses:
 * headings (with GitHub-style ids, so the guide's #links work both on GitHub and in the page),
 * paragraphs, lists, tables, fenced code, and inline code, links, images, bold and italics. All
 * text is HTML-escaped before any markup is added. A picture whose name ends in `-light.png` with
 * a `-dark.png` beside it is shown in the reader's theme (<picture> with a dark source).
 *
 * The page needs no script: its Content-Security-Policy (a meta tag) allows pictures from its own
 * origin, its one inline style block by hash, and nothing else (no scripts, no connections).
 *
 * Used by addin/webpack.config.js as a plugin (`new GuidePagePlugin()`): the page and pictures
 * are emitted as build assets, so the dev server serves them too and a production build writes
 * them into dist/guide/. A picture the guide links that is missing fails the build.
 */
"use strict";

const crypto = require("crypto");
const fs = require("fs");
const path = require("path");

const ROOT = path.resolve(__dirname, "..");
const GUIDE = path.join(ROOT, "docs", "guide.md");
const IMAGES = path.join(ROOT, "docs", "img");
/** Where the page goes, relative to dist/ (taskpane/about.ts GUIDE_PATH points here). */
const PAGE = "guide/index.html";

function escapeHtml(text) {
  return text.replace(/&/g, "&amp;").replace(/</g, "&lt;").replace(/>/g, "&gt;").replace(/"/g, "&quot;");
}

/** Heading text without inline Markdown: `code`, **bold**, *em*, [text](link) → their words. */
function plainText(markdown) {
  return markdown
    .replace(/!?\[([^\]]*)\]\([^)]*\)/g, "$1")
    .replace(/`([^`]*)`/g, "$1")
    .replace(/\*\*([^*]+)\*\*/g, "$1")
    .replace(/\*([^*]+)\*/g, "$1");
}

/**
 * The id GitHub gives a heading (common practice, as GitHub renders Markdown): lower case, every
 * character that is not a letter, digit, space, hyphen or underscore removed, spaces → hyphens.
 * Example: slug("Yes/no targets") → "yesno-targets"; slug("SHRINK.PREDICT") → "shrinkpredict".
 */
function slug(headingMarkdown) {
  return plainText(headingMarkdown)
    .trim()
    .toLowerCase()
    .replace(/[^\p{L}\p{N}\s_-]/gu, "")
    .replace(/\s/g, "-");
}

/** A picture's dark twin, for `img/x-light.png`: `img/x-dark.png` when that file is in `images`. */
function darkTwin(src, images) {
  const match = /^img\/(.+)-light\.png$/.exec(src);
  if (!match) return null;
  const name = `${match[1]}-dark.png`;
  return images.has(name) ? `img/${name}` : null;
}

/**
 * Inline Markdown → HTML. Code spans are cut out first (their text is only escaped), then the
 * rest is escaped and images, links, bold, italics and bare https addresses are marked up.
 */
function inline(markdown, context) {
  const parts = markdown.split(/(`[^`]*`)/);
  return parts
    .map((part, i) => {
      if (i % 2 === 1) return `<code>${escapeHtml(part.slice(1, -1))}</code>`;
      let html = escapeHtml(part);
      html = html.replace(/!\[([^\]]*)\]\(([^)\s]+)\)/g, (_all, alt, src) => {
        context.images.push(src);
        const img = `<img src="${src}" alt="${alt}" loading="lazy">`;
        const dark = darkTwin(src, context.available);
        return dark ? `<picture><source srcset="${dark}" media="(prefers-color-scheme: dark)">${img}</picture>` : img;
      });
      html = html.replace(/\[([^\]]+)\]\(([^)\s]+)\)/g, (_all, text, href) => {
        context.links.push(href);
        if (href.startsWith("img/")) context.images.push(href);
        return `<a href="${href}">${text}</a>`;
      });
      // A bare address, without the punctuation that ends its sentence.
      html = html.replace(/(^|[\s(])(https?:\/\/[^\s<)]*[^\s<).,;:!?])/g, (_all, before, url) => `${before}<a href="${url}">${url}</a>`);
      html = html.replace(/\*\*([^*]+)\*\*/g, "<strong>$1</strong>");
      html = html.replace(/(^|[^\w*])\*([^*\s][^*]*?)\*(?![\w*])/g, "$1<em>$2</em>");
      return html;
    })
    .join("");
}

/** The cells of a table row: `| a | b |` → ["a", "b"]. */
function tableCells(line) {
  return line
    .trim()
    .replace(/^\|/, "")
    .replace(/\|$/, "")
    .split("|")
    .map((cell) => cell.trim());
}

/**
 * The guide's Markdown → `{ html, headings, images, links }`: the body HTML, the headings
 * ({ level, text, id }), and the picture and link targets met (for the build's checks and tests).
 * `available`: names of the pictures in docs/img (for the dark twins).
 */
function renderMarkdown(markdown, available = new Set()) {
  const context = { images: [], links: [], available };
  const lines = markdown.replace(/\r\n?/g, "\n").split("\n");
  const out = [];
  const headings = [];
  const usedIds = new Map();
  let i = 0;
  const isBlank = (line) => line.trim() === "";
  const startsBlock = (line) => /^(#{1,6}\s|```|\||\s*[-*]\s|\s*\d+\.\s)/.test(line);
  while (i < lines.length) {
    const line = lines[i];
    if (isBlank(line)) {
      i++;
      continue;
    }
    const heading = /^(#{1,6})\s+(.*)$/.exec(line);
    if (heading) {
      const level = heading[1].length;
      let id = slug(heading[2]);
      const seen = usedIds.get(id) ?? 0;
      usedIds.set(id, seen + 1);
      if (seen > 0) id = `${id}-${seen}`;
      headings.push({ level, text: plainText(heading[2]), id });
      out.push(`<h${level} id="${id}">${inline(heading[2], context)}</h${level}>`);
      i++;
      continue;
    }
    if (line.startsWith("```")) {
      const code = [];
      i++;
      while (i < lines.length && !lines[i].startsWith("```")) code.push(lines[i++]);
      i++; // the closing fence
      out.push(`<pre><code>${escapeHtml(code.join("\n"))}</code></pre>`);
      continue;
    }
    if (line.startsWith("|")) {
      const rows = [];
      while (i < lines.length && lines[i].startsWith("|")) rows.push(tableCells(lines[i++]));
      const hasHeader = rows.length > 1 && rows[1].every((cell) => /^:?-+:?$/.test(cell));
      const head = hasHeader ? `<thead><tr>${rows[0].map((c) => `<th scope="col">${inline(c, context)}</th>`).join("")}</tr></thead>` : "";
      const body = (hasHeader ? rows.slice(2) : rows).map((row) => `<tr>${row.map((c) => `<td>${inline(c, context)}</td>`).join("")}</tr>`).join("\n");
      out.push(`<div class="table"><table>${head}<tbody>\n${body}\n</tbody></table></div>`);
      continue;
    }
    const item = /^(\s*)([-*]|\d+\.)\s+(.*)$/.exec(line);
    if (item) {
      const ordered = /\d/.test(item[2]);
      const items = [];
      while (i < lines.length && !isBlank(lines[i])) {
        const next = /^(\s*)([-*]|\d+\.)\s+(.*)$/.exec(lines[i]);
        if (next && next[1].length === 0) items.push(next[3]);
        else items[items.length - 1] += ` ${lines[i].trim()}`; // a wrapped line of the item
        i++;
      }
      const tag = ordered ? "ol" : "ul";
      out.push(`<${tag}>\n${items.map((text) => `<li>${inline(text, context)}</li>`).join("\n")}\n</${tag}>`);
      continue;
    }
    const paragraph = [];
    while (i < lines.length && !isBlank(lines[i]) && !(paragraph.length > 0 && startsBlock(lines[i]))) paragraph.push(lines[i++].trim());
    out.push(`<p>${inline(paragraph.join(" "), context)}</p>`);
  }
  return { html: out.join("\n"), headings, images: context.images, links: context.links };
}

const STYLE = `
:root { color-scheme: light dark; --bg: #ffffff; --text: #1f1f1f; --muted: #505050; --accent: #145a52; --line: #d4d4d4; --surface: #f4f6f6; }
@media (prefers-color-scheme: dark) { :root { --bg: #1e1e1e; --text: #f2f2f2; --muted: #c4c4c4; --accent: #7fd8c8; --line: #4a4a4a; --surface: #2a2a2a; } }
body { margin: 0 auto; max-width: 52rem; padding: 1rem 1.2rem 3rem; background: var(--bg); color: var(--text); line-height: 1.5;
  font-family: "Segoe UI", system-ui, -apple-system, "Helvetica Neue", Arial, sans-serif; font-size: 16px; }
h1, h2, h3 { color: var(--accent); line-height: 1.25; }
h2 { border-bottom: 1px solid var(--line); padding-bottom: 0.2rem; margin-top: 2.2rem; }
a { color: var(--accent); }
code, pre { font-family: Consolas, "SFMono-Regular", Menlo, monospace; font-size: 0.9em; background: var(--surface); border-radius: 3px; }
code { padding: 0.05rem 0.25rem; overflow-wrap: anywhere; }
pre { padding: 0.6rem; overflow-x: auto; }
.table { overflow-x: auto; margin: 0.8rem 0; }
table { border-collapse: collapse; font-size: 0.9rem; }
th, td { border: 1px solid var(--line); padding: 0.2rem 0.5rem; text-align: left; vertical-align: top; }
th { background: var(--surface); }
img { max-width: 100%; height: auto; border: 1px solid var(--line); }
footer { margin-top: 3rem; color: var(--muted); font-size: 0.9rem; }
`;

/** The complete page: the guide's body with its own style and a policy that allows no script. */
function guideHtml(markdown, { available = new Set(), version = "" } = {}) {
  const { html, headings, images, links } = renderMarkdown(markdown, available);
  const title = headings.find((h) => h.level === 1)?.text ?? "Shrinkwise user guide";
  const styleHash = crypto.createHash("sha256").update(STYLE, "utf8").digest("base64");
  const policy = [
    "default-src 'self'",
    "script-src 'none'",
    "object-src 'none'",
    "connect-src 'none'",
    `style-src 'sha256-${styleHash}'`,
    "img-src 'self'",
    "base-uri 'none'",
    "form-action 'none'",
  ].join("; ");
  const page = `<!doctype html>
<!-- Made from docs/guide.md by addin/guidePage.js at build time: edit the Markdown, not this file. -->
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="${policy}">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(title)}</title>
<link rel="icon" type="image/png" href="../assets/icon-32.png">
<style>${STYLE}</style>
</head>
<body>
<main>
${html}
</main>
<footer>${escapeHtml(version ? `Shrinkwise ${version}` : "Shrinkwise")} · <a href="../taskpane.html">Back to the add-in page</a></footer>
</body>
</html>
`;
  return { page, headings, images, links, policy };
}

/**
 * Reads docs/guide.md and docs/img and returns the files of the built guide: `{ files }`, a map
 * from a path under dist/ to its content (Buffer or string). Throws when the guide links a
 * picture that docs/img does not hold.
 */
function guideFiles({ guide = GUIDE, images = IMAGES, version } = {}) {
  const markdown = fs.readFileSync(guide, "utf8");
  const available = new Set(fs.existsSync(images) ? fs.readdirSync(images).filter((name) => name.endsWith(".png")) : []);
  const pkgVersion = version ?? JSON.parse(fs.readFileSync(path.join(ROOT, "package.json"), "utf8")).version;
  const { page, images: linked } = guideHtml(markdown, { available, version: pkgVersion });
  const files = new Map([[PAGE, page]]);
  const dir = path.posix.dirname(PAGE);
  for (const src of new Set(linked)) {
    const name = src.replace(/^img\//, "");
    if (!src.startsWith("img/") || name.includes("/") || !available.has(name)) {
      throw new Error(`docs/guide.md links the picture '${src}', which is not in docs/img: run the guide's screenshot test (npx jest test/browser/guideScreenshots.test.ts) or fix the link`);
    }
  }
  // Every picture in docs/img goes along: the dark twins are used by <picture>, not linked directly.
  for (const name of available) files.set(`${dir}/img/${name}`, fs.readFileSync(path.join(images, name)));
  return { files };
}

/** Writes the guide's files under `outDir` (dist/ by default); returns the paths written. */
function writeGuide(outDir = path.join(ROOT, "dist"), options = {}) {
  const { files } = guideFiles(options);
  const written = [];
  for (const [file, content] of files) {
    const target = path.join(outDir, file);
    fs.mkdirSync(path.dirname(target), { recursive: true });
    fs.writeFileSync(target, content);
    written.push(target);
  }
  return written;
}

/** Emits the guide's page and pictures as build assets; the guide and its pictures are watched. */
class GuidePagePlugin {
  apply(compiler) {
    const name = "GuidePagePlugin";
    const { webpack } = compiler;
    compiler.hooks.thisCompilation.tap(name, (compilation) => {
      compilation.hooks.processAssets.tap({ name, stage: webpack.Compilation.PROCESS_ASSETS_STAGE_ADDITIONAL }, () => {
        compilation.fileDependencies.add(GUIDE);
        compilation.contextDependencies.add(IMAGES);
        try {
          const { files } = guideFiles();
          for (const [file, content] of files) {
            const source = typeof content === "string" ? new webpack.sources.RawSource(content) : new webpack.sources.RawSource(Buffer.from(content));
            // Marked minimized: a minifier rewriting the page's style block would break its hash in the policy.
            compilation.emitAsset(file, source, { minimized: true });
          }
        } catch (error) {
          compilation.errors.push(new webpack.WebpackError(error instanceof Error ? error.message : String(error)));
        }
      });
    });
  }
}

module.exports = { GuidePagePlugin, guideFiles, guideHtml, renderMarkdown, slug, writeGuide, PAGE, GUIDE, IMAGES };
