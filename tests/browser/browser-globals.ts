/**
 * The few browser objects the tests touch inside page.evaluate / locator.evaluate, described
 * structurally. The root type-check is node-only (no DOM lib), so callbacks that run in the page write
 * `const w = globalThis as unknown as BrowserWindow` — a type-only cast, erased before Playwright sends
 * the function to the browser.
 */

export interface BrowserElement {
  textContent: string | null;
  dataset: Record<string, string | undefined>;
  disabled: boolean;
  className: string;
  style: { width: string };
  width: number;
  height: number;
  getBoundingClientRect(): { left: number; top: number; width: number; height: number };
  querySelectorAll(selector: string): Iterable<BrowserElement> & ArrayLike<BrowserElement>;
  removeAttribute(name: string): void;
  blur(): void;
  getContext(kind: '2d'): { getImageData(x: number, y: number, w: number, h: number): { data: ArrayLike<number> } } | null;
}

export interface BrowserWindow {
  document: {
    querySelector(selector: string): BrowserElement | null;
    querySelectorAll(selector: string): Iterable<BrowserElement> & ArrayLike<BrowserElement>;
    activeElement: BrowserElement | null;
    documentElement: { scrollWidth: number; clientWidth: number };
  };
  location: { hash: string };
  localStorage: { getItem(key: string): string | null };
  performance: { now(): number };
  requestAnimationFrame(callback: () => void): number;
  scrollTo(x: number, y: number): void;
  __sameDocument?: string;
}
