import path from 'node:path';
import type { Command } from 'commander';
import { ErrataError } from '../../errors.js';
import { compareProfiles } from '../../profile/compare-profiles.js';
import { profileFile } from '../../profile/profile-file.js';
import { readCodebookFile } from '../../project/codebook.js';
import { profileProject, type ProfileProgress } from '../../profile/profile-project.js';
import { renderConflicts } from '../../render/build-report.js';
import { renderComparisonJson, renderComparisonText, renderProfileJson, renderProfileText } from '../../render/profile.js';
import { tableCache } from '../build-session.js';
import { projectRoot, projectTree, workDir } from '../context.js';
import { createOutput, type Output } from '../output.js';
import { formatOption } from '../options.js';

interface ProfileCommandOptions {
  raw?: boolean;
  compare?: boolean;
  rev?: string;
  files?: string;
  codebook?: string;
  key?: string;
  format: 'text' | 'json';
}

export function registerProfile(program: Command): void {
  program
    .command('profile')
    .description('summarise each variable (counts, frequencies, quartiles, histogram, extremes) and flag likely problems: numbers stored as text, sentinel codes, values outside the codebook, variant spellings')
    .argument('[table]', 'only this table')
    .option('--raw', 'profile the raw deliveries as loaded and typed, before corrections (default: the clean data)')
    .option('--compare', 'raw and clean side by side, to see that the corrections worked')
    .option('--rev <rev>', 'as the project stood at this revision')
    .option('--files <file>', 'profile one file outside any project')
    .option('--key <columns>', 'with --files: key column(s), comma-separated, naming rows in the output (default: the codebook\'s primaryKey, else data row numbers)')
    .option('--codebook <file>', 'with --files: a codebook whose types, missing values, limits and codes apply')
    .addOption(formatOption(['text', 'json'], 'text'))
    .action(async (table: string | undefined, options: ProfileCommandOptions) => {
      const output = createOutput(program.opts());
      if (options.files) {
        if (table || options.raw || options.compare || options.rev) throw usage('--files profiles one file on its own; it takes no TABLE, --raw, --compare or --rev');
        const codebook = options.codebook ? readCodebookFile(options.codebook) : undefined;
        const key = options.key?.split(',').map((k) => k.trim()).filter(Boolean) ?? (codebook?.primaryKey.length ? codebook.primaryKey : undefined);
        output.progress(`profiling ${path.basename(options.files)}…`);
        const profile = await profileFile(options.files, { key, codebook });
        output.endProgress();
        output.out(options.format === 'json' ? renderProfileJson([profile]) : renderProfileText([profile], output.color));
        return;
      }
      if (options.key || options.codebook) throw usage('--key and --codebook go with --files; a project table takes its key from errata.yaml and its codebook from codebook/');
      if (options.raw && options.compare) throw usage('--compare already shows the raw side; use one or the other');
      const root = await projectRoot();
      const result = await profileProject({
        tree: await projectTree(root, options.rev),
        table,
        raw: Boolean(options.raw || options.compare),
        clean: !options.raw,
        workDir: workDir(root),
        cache: tableCache(root),
        onProgress: (event) => output.progress(progressText(event)),
      }).finally(() => output.endProgress());
      reportConflicts(result.conflicts, output);
      if (options.compare) {
        const comparisons = result.tables.map((t) => compareProfiles(t.raw!, t.clean!, t.renamed));
        output.out(options.format === 'json' ? renderComparisonJson(comparisons) : renderComparisonText(comparisons, output.color));
        return;
      }
      const profiles = result.tables.map((t) => (options.raw ? t.raw! : t.clean!));
      output.out(options.format === 'json' ? renderProfileJson(profiles) : renderProfileText(profiles, output.color));
    });
}

function usage(message: string): ErrataError {
  return new ErrataError('USAGE', message, { hint: 'See errata profile --help.' });
}

function progressText(event: ProfileProgress): string {
  switch (event.phase) {
    case 'load':
      return `loading ${event.table}…`;
    case 'correct':
      return `${event.table}: correction ${event.index + 1}/${event.total} ${event.correction}`;
    case 'write':
      return `building ${event.table}…`;
    case 'profile':
      return `profiling ${event.table} (${event.side})…`;
  }
}

/** A profile of a build with conflicts is still useful; say which edits it leaves out. */
function reportConflicts(conflicts: Parameters<typeof renderConflicts>[0], output: Output): void {
  if (conflicts.length === 0) return;
  output.err(renderConflicts(conflicts));
  output.err(output.color.yellow('The clean profile shows the build with these edits left out.'));
}
