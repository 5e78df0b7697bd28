import type { Command } from 'commander';

/** Registers a command on the program; `setExit` records the exit code of a run that found something. */
export type RegisterCommand = (program: Command, setExit: (code: number) => void) => void;

/**
 * Each command's module, loaded only when that command runs (or all of them, for help): a command
 * then loads only the libraries it uses, which matters most for the git diff driver, run once per
 * changed file by `git diff` and `git log -p`. In the order help lists them.
 */
const MODULES: Array<{ names: string[]; load: () => Promise<RegisterCommand> }> = [
  { names: ['init'], load: async () => (await import('./init.js')).registerInit },
  { names: ['build'], load: async () => (await import('./build.js')).registerBuild },
  { names: ['verify'], load: async () => (await import('./verify.js')).registerVerify },
  { names: ['why'], load: async () => (await import('./why.js')).registerWhy },
  { names: ['log'], load: async () => (await import('./log.js')).registerLog },
  { names: ['diff'], load: async () => (await import('./diff.js')).registerDiff },
  { names: ['git-setup', 'git-diff-driver'], load: async () => (await import('./git-setup.js')).registerGitSetup },
  { names: ['review'], load: async () => (await import('./review.js')).registerReview },
  { names: ['fix'], load: async () => (await import('./fix.js')).registerFix },
  { names: ['note'], load: async () => (await import('./note.js')).registerNote },
  { names: ['profile'], load: async () => (await import('./profile.js')).registerProfile },
  { names: ['check'], load: async () => (await import('./check.js')).registerCheck },
  { names: ['codebook'], load: async () => (await import('./codebook.js')).registerCodebook },
  { names: ['queries'], load: async () => (await import('./queries.js')).registerQueries },
  { names: ['report'], load: async () => (await import('./report.js')).registerReport },
];

/** Options of the program itself that take a value (the next argument is not the command). */
const VALUE_OPTIONS = new Set(['--timeout']);

/**
 * The commands to register for this command line: the one it names, or every one when it names
 * none or an unknown one (help and the "did you mean" of an unknown command need them all).
 */
export async function commandsFor(args: readonly string[]): Promise<RegisterCommand[]> {
  let named: string | undefined;
  for (let i = 0; i < args.length; i += 1) {
    const arg = args[i];
    if (VALUE_OPTIONS.has(arg)) i += 1;
    else if (!arg.startsWith('-')) {
      named = arg;
      break;
    }
  }
  const one = named === undefined ? undefined : MODULES.find((m) => m.names.includes(named));
  if (one) return [await one.load()];
  if (named === undefined && args.some((a) => a === '-V' || a === '--version')) return [];
  return Promise.all(MODULES.map((m) => m.load()));
}
