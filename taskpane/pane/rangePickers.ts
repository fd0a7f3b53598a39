/**
 * Range pickers: one per range the pane needs (target, predictors, new rows, where formulas go).
 * Each shows the chosen address and offers "Use selection" (the sheet's current selection), the
 * host's own range prompt where it has one ("Choose on sheet…"), and "Clear" for optional ranges.
 *
 * Test ids (`<key>` is target, predictors, new-rows, destination):
 *   <key>-use-selection  <key>-prompt  <key>-clear  <key>-address (the output showing the address)
 */
import type { SheetHost } from "../host/sheetHost";
import { parseAddress, formatAddress } from "../host/address";

export interface RangePickerSpec {
  /** Test-id stem: target, predictors, new-rows, destination. */
  key: string;
  label: string;
  hint: string;
  optional: boolean;
  /** What "not chosen" reads as. */
  emptyText: string;
  /** Prompt title for the host's range prompt. */
  promptLabel: string;
  /** For the destination: the top-left cell of the selection is enough. */
  singleCell?: boolean;
}

export interface RangePicker {
  element: HTMLElement;
  /** Shows `address` (after a restore). */
  show(address: string): void;
  /** Turns the buttons off while something else runs (e.g. a fit). */
  setDisabled(disabled: boolean): void;
}

/** The top-left cell of an address, with its sheet (`Data!O1:P3` → `Data!O1`); the address itself if unreadable. */
export function firstCell(address: string): string {
  try {
    const range = parseAddress(address);
    return formatAddress({ sheet: range.sheet, top: range.top, left: range.left, bottom: range.top, right: range.left });
  } catch {
    return address;
  }
}

function button(text: string, testid: string, ariaLabel?: string): HTMLButtonElement {
  const b = document.createElement("button");
  b.type = "button";
  b.textContent = text;
  b.dataset.testid = testid;
  if (ariaLabel) b.setAttribute("aria-label", ariaLabel);
  return b;
}

/**
 * One picker. `onPick(address)` receives the new address ("" when cleared) and `report(text,
 * failed)` puts a line in the pane's status region.
 */
export function renderRangePicker(
  spec: RangePickerSpec,
  host: SheetHost,
  initial: string,
  onPick: (address: string) => void,
  report: (text: string, failed?: boolean) => void,
): RangePicker {
  const id = `range-${spec.key}`;
  const group = document.createElement("div");
  group.className = "picker";
  group.setAttribute("role", "group");
  group.setAttribute("aria-labelledby", `${id}-label`);
  group.setAttribute("aria-describedby", `${id}-hint`);

  const label = document.createElement("span");
  label.className = "picker-label";
  label.id = `${id}-label`;
  label.textContent = spec.label;

  const output = document.createElement("output");
  output.className = "address";
  output.id = `${id}-address`;
  output.dataset.testid = `${spec.key}-address`;
  output.setAttribute("aria-labelledby", `${id}-label`);
  // The pick is announced once, by the pane's message line; the address itself stays quiet.
  output.setAttribute("aria-live", "off");

  const hint = document.createElement("p");
  hint.className = "hint";
  hint.id = `${id}-hint`;
  hint.textContent = spec.hint;

  const lower = spec.label.replace(/\s*\(optional\)$/, "").toLowerCase();
  const useSelection = button("Use selection", `${spec.key}-use-selection`, `Use selection for ${lower}`);
  const buttons = document.createElement("div");
  buttons.className = "picker-buttons";
  buttons.append(useSelection);
  let prompt: HTMLButtonElement | null = null;
  if (host.canPromptForRange) {
    prompt = button("Choose on sheet…", `${spec.key}-prompt`, `Choose on sheet… for ${lower}`);
    buttons.append(prompt);
  }
  let clear: HTMLButtonElement | null = null;
  if (spec.optional) {
    clear = button("Clear", `${spec.key}-clear`, `Clear ${lower}`);
    buttons.append(clear);
  }

  let current = initial;
  const show = (address: string): void => {
    current = address;
    output.textContent = address || spec.emptyText;
    output.classList.toggle("unset", !address);
    if (clear) clear.disabled = !address;
  };
  const pick = (address: string): void => {
    const value = spec.singleCell ? firstCell(address) : address;
    show(value);
    onPick(value);
    report(value ? `${spec.label.replace(/\s*\(optional\)$/, "")}: ${value}` : `${spec.label.replace(/\s*\(optional\)$/, "")} cleared`);
  };

  useSelection.addEventListener("click", () => {
    host.selectionAddress().then(pick, (error: unknown) => report(`Could not read the selection: ${error instanceof Error ? error.message : String(error)}`, true));
  });
  prompt?.addEventListener("click", () => {
    host.promptForRange(spec.promptLabel).then(
      (address) => {
        if (address) pick(address);
      },
      (error: unknown) => report(`The range prompt failed: ${error instanceof Error ? error.message : String(error)}`, true),
    );
  });
  clear?.addEventListener("click", () => {
    pick("");
    useSelection.focus();
  });

  const row = document.createElement("div");
  row.className = "picker-row";
  row.append(output, buttons);
  group.append(label, row, hint);
  show(current);
  return {
    element: group,
    show,
    setDisabled(disabled: boolean) {
      useSelection.disabled = disabled;
      if (prompt) prompt.disabled = disabled;
      if (clear) clear.disabled = disabled || !current;
    },
  };
}
