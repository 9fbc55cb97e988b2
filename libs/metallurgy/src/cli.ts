/**
 * The `ausline` command line, without I/O: bin/ausline.mjs reads the file (or stdin) and writes what this returns,
 * so the library stays free of file access.
 *
 *   ausline predict FILE   one JSON object: the prediction of a batch (see README.md)
 *   ausline t0 FILE        {"rows":[{"tempC","t0CarbonWtPct","t0PrimeCarbonWtPct"}],"warnings":[string]}
 *   FILE '-' reads stdin; --pretty indents the JSON.
 * Bad input: exit code 2 and ONE line on stderr naming the field and what is wrong.
 */
import { parsePredictInput, parseT0Input } from './input.js';
import { predict } from './predict.js';
import { t0Rows } from './t0Rows.js';

export const USAGE = 'usage: ausline predict FILE | ausline t0 FILE   (FILE "-" reads stdin; --pretty indents the output)';

export interface CliResult {
  exitCode: number;
  stdout: string;
  stderr: string;
}

export interface CliArgs {
  command: string | undefined;
  file: string | undefined;
  pretty: boolean;
}

export function parseArgs(argv: readonly string[]): CliArgs | { error: string } {
  const positional: string[] = [];
  let pretty = false;
  for (const arg of argv) {
    if (arg === '--pretty') pretty = true;
    else if (arg === '-' || !arg.startsWith('-')) positional.push(arg);
    else return { error: `unknown option ${arg}; ${USAGE}` };
  }
  if (positional.length === 0) return { error: USAGE };
  if (positional.length > 2) return { error: `too many arguments; ${USAGE}` };
  return { command: positional[0], file: positional[1], pretty };
}

const badInput = (message: string): CliResult => ({ exitCode: 2, stdout: '', stderr: `ausline: ${oneLine(message)}\n` });

function oneLine(s: string): string {
  return s.replace(/\s*\n\s*/g, ' ').trim();
}

/** Runs one command on the text of its input file. */
export function runCli(command: string | undefined, inputText: string, opts: { pretty?: boolean } = {}): CliResult {
  if (command !== 'predict' && command !== 't0') return badInput(command === undefined ? USAGE : `unknown command '${command}'; ${USAGE}`);
  let raw: unknown;
  try {
    raw = JSON.parse(inputText);
  } catch (e) {
    return badInput(`input: not valid JSON (${(e as Error).message})`);
  }
  const indent = opts.pretty ? 2 : undefined;
  if (command === 't0') {
    const parsed = parseT0Input(raw);
    if ('issues' in parsed) return badInput(formatIssue(parsed.issues[0]));
    // The chemistry warnings (e.g. Mn ≥ 1.5: T0′ is model-dependent) travel with the rows, as they do in predict.
    const out = { ...t0Rows(parsed.input), warnings: parsed.warnings };
    return { exitCode: 0, stdout: JSON.stringify(out, null, indent) + '\n', stderr: '' };
  }
  const parsed = parsePredictInput(raw);
  if ('issues' in parsed) return badInput(formatIssue(parsed.issues[0]));
  const out = predict(parsed.input);
  return { exitCode: 0, stdout: JSON.stringify(out, null, indent) + '\n', stderr: '' };
}

function formatIssue(issue: { path: string; message: string }): string {
  return issue.path ? `${issue.path}: ${issue.message}` : `input: ${issue.message}`;
}
