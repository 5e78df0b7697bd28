import { existsSync, mkdirSync, readdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { ErrataError } from '../errors.js';
import { initRepo } from '../git/repo.js';

export const PROJECT_FOLDERS = ['raw', 'codebook', 'corrections', 'notes', 'clean'] as const;

const CONFIG_TEMPLATE = `# errata project. One entry per table under "tables", for example:
#
# tables:
#   visits:
#     raw: raw/visits            # a delivery file, or a folder of deliveries (the newest file is used;
#                                # "deliveries: append" stacks them all)
#     key: participant_id        # the column(s) that identify a row
#     codebook: codebook/visits.yaml   # optional; this is the default
#     output: clean/visits.csv         # optional; this is the default
tables: {}
`;

const PEOPLE_TEMPLATE = `# Who may approve changes to which tables and columns. Approval notes name a person by id.
#
# people:
#   - id: rkovac
#     name: Renata Kovac
#     role: principal investigator
#     approves:
#       - table: visits
#         columns: all           # or a list of column names
people: []
`;

const GITIGNORE = `# errata's local cache and scratch space
.errata/
`;

/**
 * Create an empty data project in `dir` (which must be new or empty) as a git repository.
 * Folders git would not keep while empty carry a .gitkeep.
 */
export async function initProject(dir: string): Promise<string[]> {
  const root = path.resolve(dir);
  if (existsSync(root) && readdirSync(root).length > 0) {
    throw new ErrataError('USAGE', `${root} exists and is not empty`, {
      hint: 'Give a new or empty folder; errata init never writes over existing files.',
    });
  }
  mkdirSync(root, { recursive: true });
  await initRepo(root);
  const created = ['errata.yaml', 'people.yaml', '.gitignore'];
  writeFileSync(path.join(root, 'errata.yaml'), CONFIG_TEMPLATE);
  writeFileSync(path.join(root, 'people.yaml'), PEOPLE_TEMPLATE);
  writeFileSync(path.join(root, '.gitignore'), GITIGNORE);
  for (const folder of PROJECT_FOLDERS) {
    mkdirSync(path.join(root, folder), { recursive: true });
    writeFileSync(path.join(root, folder, '.gitkeep'), '');
    created.push(`${folder}/`);
  }
  return created;
}
