import { Command, CommanderError } from 'commander';
import { ErrataError } from '../errors.js';
import { setStatementTimeout } from '../engine/session.js';
import { faultPause } from '../fault.js';
import { VERSION } from '../version.js';
import { createOutput } from './output.js';
import { commandsFor } from './commands/index.js';
import { acquireLock, describeHolder } from './lock.js';
import { dataProjectRoot } from './context.js';

/** Exit codes everywhere: 0 ok, 1 findings, 2 bad usage or bad input. */
export const EXIT = { ok: 0, findings: 1, error: 2 } as const;

/**
 * Which commands take the project lock (see lock.ts), by command path. `required`: the command writes
 * project files, so it fails when it cannot lock. `optional`: it writes only the cache and scratch
 * space, so in a read-only checkout it runs unlocked (and uncached). Commands not listed take no lock:
 * init writes only into a new or empty folder, git-setup only git's own config, and the diff driver
 * runs inside `git diff` and must never wait.
 */
const LOCKING: Record<string, 'required' | 'optional'> = {
  build: 'required',
  fix: 'required',
  'note add': 'required',
  'codebook draft': 'required',
  'queries export': 'required',
  'queries import': 'required',
  verify: 'optional',
  diff: 'optional',
  check: 'optional',
  profile: 'optional',
  review: 'optional',
  why: 'optional',
  log: 'optional',
  report: 'optional',
};

/** Run the command line; resolves to the exit code. Errors are caught here, once. */
export async function main(argv: string[]): Promise<number> {
  const program = new Command('errata')
    .description('Keep raw data immutable in git, fix it with reviewed correction files, rebuild clean data with cell lineage.')
    .version(VERSION)
    .option('-q, --quiet', 'no progress output')
    .option('--timeout <seconds>', 'longest one query may run before it is stopped (default 600, or ERRATA_TIMEOUT)')
    .exitOverride()
    .configureOutput({ writeErr: (s) => process.stderr.write(s), writeOut: (s) => process.stdout.write(s) })
    .showHelpAfterError('(run errata --help for the list of commands)');
  let exitCode: number = EXIT.ok;
  for (const register of await commandsFor(argv.slice(2))) {
    register(program, (code) => {
      exitCode = code;
    });
  }
  const held: { release: (() => void) | null } = { release: null };
  program.hook('preAction', async (_program, action) => {
    applyTimeout(program.opts<{ timeout?: string }>().timeout);
    held.release = await lockFor(commandPath(action), program.opts<{ quiet?: boolean }>());
    if (held.release) await faultPause('locked');
  });
  try {
    await program.parseAsync(argv);
    return exitCode;
  } catch (error) {
    const code = reportError(error);
    if (stuckTimeout(error)) {
      // The engine is still inside the runaway computation and would block a normal exit.
      held.release?.();
      held.release = null;
      process.kill(process.pid, 'SIGKILL');
    }
    return code;
  } finally {
    held.release?.();
  }
}

function commandPath(command: Command): string {
  const names: string[] = [];
  for (let c: Command | null = command; c?.parent; c = c.parent) names.unshift(c.name());
  return names.join(' ');
}

async function lockFor(command: string, options: { quiet?: boolean }): Promise<(() => void) | null> {
  const mode = LOCKING[command];
  if (!mode) return null;
  // Outside a data project (no project, a bare clone, `diff --files` in some other repository) there
  // is nothing of errata's to protect, and no .errata/ folder should appear.
  const root = await dataProjectRoot();
  if (!root) return null;
  const output = createOutput(options);
  return acquireLock(root, {
    command,
    optional: mode === 'optional',
    onWait: (holder) => {
      if (!options.quiet) output.err(`waiting for ${holder ? describeHolder(holder) : 'another errata run'} to finish…`);
    },
  });
}

function applyTimeout(value: string | undefined): void {
  if (value === undefined) return;
  const seconds = Number(value);
  if (!Number.isFinite(seconds) || seconds <= 0) {
    throw new ErrataError('USAGE', `--timeout must be a number of seconds above 0, not "${value}"`, { hint: 'For example --timeout 1800 for half an hour.' });
  }
  setStatementTimeout(seconds * 1000);
}

/** The first TIMEOUT in the error or its causes: a step that ran too long may be reported by its file and line. */
function timeoutIn(error: unknown): ErrataError | null {
  for (let e: unknown = error, depth = 0; e && depth < 8; e = (e as Error).cause, depth++) {
    if (e instanceof ErrataError && e.code === 'TIMEOUT') return e;
  }
  return null;
}

function stuckTimeout(error: unknown): boolean {
  return timeoutIn(error)?.data.stuck === true;
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
    const timeout = timeoutIn(error);
    const hint = timeout && timeout !== error ? timeout.hint : error.hint;
    if (hint) output.err(`${output.color.dim('hint')}: ${hint}`);
    if (process.env.ERRATA_DEBUG && error.cause) output.err(String((error.cause as Error).stack ?? error.cause));
    return EXIT.error;
  }
  output.err(`errata: internal error: ${(error as Error)?.stack ?? String(error)}`);
  output.err('This is a bug in errata; please report it with the command you ran.');
  return EXIT.error;
}
