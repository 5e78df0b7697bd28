import { Command, CommanderError } from 'commander';
import { ErrataError } from '../errors.js';
import { VERSION } from '../version.js';
import { createOutput } from './output.js';
import { commands } from './commands/index.js';

/** Exit codes everywhere: 0 ok, 1 findings, 2 bad usage or bad input. */
export const EXIT = { ok: 0, findings: 1, error: 2 } as const;

/** Run the command line; resolves to the exit code. Errors are caught here, once. */
export async function main(argv: string[]): Promise<number> {
  const program = new Command('errata')
    .description('Keep raw data immutable in git, fix it with reviewed correction files, rebuild clean data with cell lineage.')
    .version(VERSION)
    .option('-q, --quiet', 'no progress output')
    .exitOverride()
    .configureOutput({ writeErr: (s) => process.stderr.write(s), writeOut: (s) => process.stdout.write(s) })
    .showHelpAfterError('(run errata --help for the list of commands)');
  let exitCode: number = EXIT.ok;
  for (const register of commands) {
    register(program, (code) => {
      exitCode = code;
    });
  }
  try {
    await program.parseAsync(argv);
    return exitCode;
  } catch (error) {
    return reportError(error);
  }
}

function reportError(error: unknown): number {
  const output = createOutput();
  if (error instanceof CommanderError) {
    if (error.code === 'commander.helpDisplayed' || error.code === 'commander.version' || error.exitCode === 0) return EXIT.ok;
    return EXIT.error;
  }
  if (error instanceof ErrataError) {
    output.endProgress?.();
    output.err(`${output.color.red('error')}: ${error.located}`);
    if (error.hint) output.err(`${output.color.dim('hint')}: ${error.hint}`);
    if (process.env.ERRATA_DEBUG && error.cause) output.err(String((error.cause as Error).stack ?? error.cause));
    return EXIT.error;
  }
  output.err(`errata: internal error: ${(error as Error)?.stack ?? String(error)}`);
  output.err('This is a bug in errata; please report it with the command you ran.');
  return EXIT.error;
}
