#!/usr/bin/env node
// The `ausline` command: registers tsx so the TypeScript sources run without a build step, reads the input
// (a file, or stdin for "-"), and hands the text to src/cli.ts, which does no I/O itself.
import { readFileSync } from 'node:fs';
import { register } from 'tsx/esm/api';

register();
const { parseArgs, runCli } = await import('../src/cli.ts');

const args = parseArgs(process.argv.slice(2));
let result;
if ('error' in args) {
  result = { exitCode: 2, stdout: '', stderr: `ausline: ${args.error}\n` };
} else if (args.command === 'predict' || args.command === 't0') {
  if (args.file === undefined) {
    result = { exitCode: 2, stdout: '', stderr: `ausline: missing FILE (use "-" for stdin)\n` };
  } else {
    let text;
    try {
      text = readFileSync(args.file === '-' ? 0 : args.file, 'utf8');
    } catch (e) {
      result = { exitCode: 2, stdout: '', stderr: `ausline: cannot read ${args.file === '-' ? 'stdin' : args.file}: ${e.code ?? e.message}\n` };
    }
    if (!result) {
      try {
        result = runCli(args.command, text, { pretty: args.pretty });
      } catch (e) {
        result = { exitCode: 1, stdout: '', stderr: `ausline: internal error: ${String(e?.message ?? e).split('\n')[0]}\n` };
      }
    }
  }
} else {
  result = runCli(args.command, '');
}
process.stdout.write(result.stdout);
process.stderr.write(result.stderr);
process.exitCode = result.exitCode;
