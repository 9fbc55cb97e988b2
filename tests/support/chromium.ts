/**
 * The Chromium the browser tests drive (playwright-core with Debian's package, no downloaded browser).
 * CHROMIUM_PATH points at another build (e.g. /usr/bin/chromium-browser); the default is Debian's.
 * The global setup checks it before anything else when the run includes browser tests, so a machine
 * without Chromium stops at once with the install command instead of failing file by file.
 */
import { accessSync, constants, readdirSync, readFileSync } from 'node:fs';
import { join, relative, sep } from 'node:path';
import { fileURLToPath } from 'node:url';

export const CHROMIUM = process.env.CHROMIUM_PATH || '/usr/bin/chromium';
export const INSTALL_CHROMIUM = 'apt-get update && apt-get install -y chromium';

const REPO = fileURLToPath(new URL('../..', import.meta.url));
const DRIVES_CHROMIUM = /from '[./]*browser\/support\.js'|from 'playwright-core'/;

/** Throws, with the install command, when `path` is not an executable file. */
export function requireChromium(path: string = CHROMIUM): void {
  try {
    accessSync(path, constants.X_OK);
  } catch {
    const error = new Error(
      [
        `The browser tests need Chromium at ${path}, and it is not there (or not executable). Install it with:`,
        `    ${INSTALL_CHROMIUM}`,
        'Elsewhere point CHROMIUM_PATH at a Chromium build, or run only other files (npx vitest run tests/ingest-samples.test.ts).',
      ].join('\n'),
    );
    error.stack = error.message; // the stack adds nothing here
    throw error;
  }
}

/** Repository-relative paths of every test file that drives Chromium: tests/browser and any file using its support. */
export function browserTestFiles(repo: string = REPO): string[] {
  const files = readdirSync(join(repo, 'tests'), { recursive: true, encoding: 'utf8' })
    .filter((name) => name.endsWith('.test.ts'))
    .map((name) => `tests/${name.split(sep).join('/')}`);
  return files.filter((file) => file.startsWith('tests/browser/') || DRIVES_CHROMIUM.test(readFileSync(join(repo, file), 'utf8'))).sort();
}

/**
 * Whether a `vitest run` with these CLI filters runs a browser test. vitest keeps a file when its path
 * contains any filter (none: every file); the same rule here, on relative and absolute paths.
 */
export function runNeedsChromium(filters: readonly string[] | undefined, files: readonly string[] = browserTestFiles(), repo: string = REPO): boolean {
  if (!filters || filters.length === 0) return true;
  return files.some((file) => {
    const absolute = join(repo, file);
    return filters.some((filter) => {
      const normalized = filter.startsWith('./') ? filter.slice(2) : filter;
      return file.includes(normalized) || absolute.includes(filter) || relative(repo, filter) === file;
    });
  });
}
