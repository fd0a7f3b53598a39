/**
 * The pane's last line: which Shrinkwise this is (the version in package.json) and a link to the
 * user guide, which the build writes beside the pane (addin/guidePage.js → dist/guide/index.html).
 *
 * The link is relative to the page, so it stays on the add-in's own origin wherever the built
 * files are served (localhost in development, any base path on a team's web server). It opens in
 * a new window or tab: the pane is narrow and the guide is a page to read beside the workbook.
 */
import packageJson from "../package.json";

/** The version this build was made from (package.json's `version`). */
export const VERSION: string = packageJson.version;

/** The guide's page, relative to taskpane.html (both in dist/). */
export const GUIDE_PATH = "guide/index.html";

/** The words of the version line: "Shrinkwise 0.1.0". */
export function versionText(version: string = VERSION): string {
  return `Shrinkwise ${version}`;
}

/** The guide's address for a page at `pageUrl` (the same origin and folder as the page). */
export function guideUrl(pageUrl: string): string {
  return new URL(GUIDE_PATH, pageUrl).href;
}

/** The version and the guide link, as a small footer for the pane (test ids about, about-version, guide-link). */
export function aboutLine(doc: Document = document, version: string = VERSION): HTMLElement {
  const footer = doc.createElement("footer");
  footer.className = "about hint";
  footer.dataset.testid = "about";
  const name = doc.createElement("span");
  name.dataset.testid = "about-version";
  name.textContent = versionText(version);
  const link = doc.createElement("a");
  link.dataset.testid = "guide-link";
  link.href = GUIDE_PATH;
  link.target = "_blank";
  // The guide needs no handle on the pane, nor the pane's address.
  link.rel = "noopener noreferrer";
  link.textContent = "User guide";
  const opens = doc.createElement("span");
  opens.className = "visually-hidden";
  opens.textContent = " (opens in a new window)";
  link.append(opens);
  footer.append(name, " · ", link);
  return footer;
}
