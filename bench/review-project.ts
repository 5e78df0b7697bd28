/**
 * The invented data project behind bench/review.ts: one table, `visits`, keyed by participant_id,
 * delivered as one CSV of `rows` rows and 20 columns; then a history of approval notes and 100
 * correction files (mostly set-where and guarded edits, plus two sentinel and two recode steps),
 * each committed after the note it cites. Every changed cell is planned here, no two corrections
 * touch the same cell, and every planned cell really changes, so the number of cells the range
 * changes is known exactly before errata sees it.
 *
 * Rows belong to form batches: row i (0-based, in key order) is in batch 1 + (i mod 1000). A set-where
 * correction targets whole batches (sometimes narrowed by a condition on columns no correction
 * changes), and a (batch, column) pair is given to at most one correction; guarded edits pick cells
 * outside every pair already given. Everything derives from the seed, so the same seed and row count
 * give the same bytes and the same commits, and a project already on disk is reused.
 */
import { closeSync, existsSync, mkdirSync, openSync, readFileSync, rmSync, writeFileSync, writeSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { commitAll, commitPaths, hasCommits, initRepo, resolveRevision } from '../src/git/repo.js';
import { bell, dayOf, int, isoDay, permutation, pick, round, streamFor, writeText } from './generated-data.js';

export const BENCH_DIR = path.dirname(fileURLToPath(import.meta.url));
export const REPO_ROOT = path.resolve(BENCH_DIR, '..');
export const OUT_DIR = path.join(BENCH_DIR, 'out');

/** Bump when the generator changes, so older projects on disk are rebuilt rather than reused. */
const GENERATOR_VERSION = 1;

export const TABLE = 'visits';
export const RAW_FILE = `raw/${TABLE}/2026-02-02-visits.csv`;
export const BATCHES = 1000;

export const COLUMNS = [
  'participant_id', 'form_batch', 'site', 'arm', 'sex', 'enrolled_on', 'visit_date', 'age', 'height_cm', 'weight_kg',
  'systolic', 'diastolic', 'glucose_mmol', 'cholesterol_mmol', 'smoker', 'education', 'income_band', 'score', 'region', 'status',
] as const;
type Column = (typeof COLUMNS)[number];
const col = (name: Column) => COLUMNS.indexOf(name);

const DAY_SECONDS = 86_400;
/** The delivery is committed at noon UTC on 2026-02-02; each later commit is one day after the previous. */
const BASE_TIME = Date.UTC(2026, 1, 2, 12) / 1000;
const author = (day: number) => ({ name: 'Bench Steward', email: 'steward@example.org', timestamp: BASE_TIME + day * DAY_SECONDS, timezoneOffset: 0 });

const SITES = Array.from({ length: 12 }, (_, i) => `S${String(i + 1).padStart(2, '0')}`);
const REGION_OF_SITE = ['north', 'north', 'north', 'east', 'east', 'south', 'south', 'central', 'central', 'west', 'west', 'west'];
const EDUCATION = ['none', 'primary', 'secondary', 'tertiary'];

export const batchOf = (index: number) => 1 + (index % BATCHES);
export const keyOf = (index: number) => `P${String(index + 1).padStart(7, '0')}`;

/**
 * One row as CSV fields. No field is ever empty, so every planned change really changes its cell.
 * Planted for the corrections: income_band -9 ("declined", 0.5 %), smoker 9 ("unknown", 1 %),
 * education "sec" (0.2 %) and status "lost" (3 %).
 */
export function generateRow(seed: number, index: number): string[] {
  const r = streamFor(seed, index);
  const f: string[] = new Array(COLUMNS.length);
  f[0] = keyOf(index);
  f[1] = String(batchOf(index));
  const site = int(r, 0, 11);
  f[2] = SITES[site];
  f[3] = pick(r, ['A', 'B', 'C']);
  f[4] = r() < 0.5 ? 'F' : 'M';
  const enrolled = dayOf(int(r, 2019, 2024), int(r, 1, 12), int(r, 1, 28));
  f[5] = isoDay(enrolled);
  f[6] = isoDay(enrolled + int(r, 0, 400));
  f[7] = String(int(r, 18, 90));
  f[8] = String(round(bell(r, 145, 200), 1));
  f[9] = String(round(bell(r, 45, 125), 1));
  const systolic = int(r, 100, 175);
  f[10] = String(systolic);
  f[11] = String(int(r, 55, Math.min(105, systolic - 15)));
  f[12] = String(round(bell(r, 3.8, 9.5), 2));
  f[13] = String(round(bell(r, 3, 7.5), 2));
  f[14] = r() < 0.01 ? '9' : r() < 0.22 ? '1' : '0';
  f[15] = r() < 0.002 ? 'sec' : pick(r, EDUCATION);
  f[16] = r() < 0.005 ? '-9' : String(int(r, 1, 5));
  f[17] = String(round(1 + r() * 99, 1));
  f[18] = REGION_OF_SITE[site];
  const status = r();
  f[19] = status < 0.6 ? 'active' : status < 0.92 ? 'completed' : status < 0.97 ? 'withdrawn' : 'lost';
  return f;
}

function writeCsv(file: string, seed: number, rows: number): void {
  mkdirSync(path.dirname(file), { recursive: true });
  const fd = openSync(file, 'w');
  try {
    writeSync(fd, COLUMNS.join(',') + '\n');
    const order = permutation(seed, rows);
    const batch: string[] = [];
    for (let i = 0; i < rows; i += 1) {
      batch.push(generateRow(seed, order[i]).join(','));
      if (batch.length === 20_000 || i === rows - 1) {
        writeSync(fd, batch.join('\n') + '\n');
        batch.length = 0;
      }
    }
  } finally {
    closeSync(fd);
  }
}

// ---------------------------------------------------------------------------------------------
// The corrections

/** A set-where template: what it sets, why, and (optionally) which rows of a batch it is about. */
interface SetTemplate {
  slug: string;
  reason: string;
  assign: Array<{ column: Column; expression: string }>;
  /** SQL narrowing the batch, and the same condition over a generated row. */
  narrow?: { sql: string; test: (f: string[]) => boolean };
}

const SET_TEMPLATES: SetTemplate[] = [
  { slug: 'age-at-last-birthday', reason: 'Age was recorded at the last birthday before enrolment; the protocol asks for age at the visit', assign: [{ column: 'age', expression: 'age + 1' }] },
  { slug: 'cuff-offset', reason: 'The blood pressure cuff used for these forms read 10 mmHg systolic and 5 mmHg diastolic low', assign: [{ column: 'systolic', expression: 'systolic + 10' }, { column: 'diastolic', expression: 'diastolic + 5' }] },
  { slug: 'systolic-offset', reason: 'The automatic monitor of these forms read 6 mmHg low systolic (service report)', assign: [{ column: 'systolic', expression: 'systolic + 6' }] },
  {
    slug: 'smoker-reversed',
    reason: 'The smoking question was printed with the answers in reverse order on these forms',
    assign: [{ column: 'smoker', expression: '1 - smoker' }],
    narrow: { sql: 'smoker IN (0, 1)', test: (f) => f[col('smoker')] === '0' || f[col('smoker')] === '1' },
  },
  {
    slug: 'income-band-shift',
    reason: 'The income bands were printed one step too high on these forms',
    assign: [{ column: 'income_band', expression: 'income_band - 1' }],
    narrow: { sql: 'income_band BETWEEN 2 AND 5', test: (f) => Number(f[col('income_band')]) >= 2 },
  },
  { slug: 'stadiometer', reason: 'The stadiometer used for these forms was mounted 1.5 cm too low', assign: [{ column: 'height_cm', expression: 'round(height_cm + 1.5, 1)' }] },
  { slug: 'scale-tare', reason: 'The scale of these forms was not tared; subtract the 0.8 kg of the mat', assign: [{ column: 'weight_kg', expression: 'round(weight_kg - 0.8, 1)' }] },
  { slug: 'anthropometry-shoes', reason: 'These participants were measured with shoes on: 2.5 cm and 1.2 kg too much', assign: [{ column: 'height_cm', expression: 'round(height_cm - 2.5, 1)' }, { column: 'weight_kg', expression: 'round(weight_kg - 1.2, 1)' }] },
  { slug: 'glucose-whole-blood', reason: 'Glucose was measured in whole blood; convert to plasma equivalent', assign: [{ column: 'glucose_mmol', expression: 'round(glucose_mmol * 1.12, 2)' }] },
  { slug: 'lab-calibration', reason: 'The laboratory recalibrated; its earlier glucose and cholesterol results read low', assign: [{ column: 'glucose_mmol', expression: 'round(glucose_mmol + 0.15, 2)' }, { column: 'cholesterol_mmol', expression: 'round(cholesterol_mmol + 0.2, 2)' }] },
  { slug: 'cholesterol-offset', reason: 'Cholesterol from the field analyser read 0.3 mmol/L high', assign: [{ column: 'cholesterol_mmol', expression: 'round(cholesterol_mmol - 0.3, 2)' }] },
  { slug: 'score-bonus-item', reason: 'Scores included the bonus item, which the protocol excludes: remove its 10 %', assign: [{ column: 'score', expression: 'round(score * 0.9, 1)' }] },
  { slug: 'visit-print-date', reason: 'Visits of these forms carry the print date of the form, one week before the visit', assign: [{ column: 'visit_date', expression: 'visit_date + 7' }] },
  { slug: 'export-time-zone', reason: 'Dates of these forms were exported one day late (time zone of the export)', assign: [{ column: 'enrolled_on', expression: 'enrolled_on - 1' }, { column: 'visit_date', expression: 'visit_date - 1' }] },
  {
    slug: 'arms-swapped',
    reason: 'Arms A and B were swapped on the randomisation list of these forms',
    assign: [{ column: 'arm', expression: "CASE arm WHEN 'A' THEN 'B' ELSE 'A' END" }],
    narrow: { sql: "arm IN ('A', 'B')", test: (f) => f[col('arm')] !== 'C' },
  },
  { slug: 'sex-inverted', reason: 'The sex codes of these forms were keyed inverted', assign: [{ column: 'sex', expression: "CASE sex WHEN 'F' THEN 'M' ELSE 'F' END" }] },
  {
    slug: 'site-satellite',
    reason: 'Forms of these batches marked S11 came from the S12 satellite clinic',
    assign: [{ column: 'site', expression: "'S12'" }],
    narrow: { sql: "site = 'S11'", test: (f) => f[col('site')] === 'S11' },
  },
  {
    slug: 'older-age-rounding',
    reason: 'Ages of 60 and over on these forms were rounded down to the decade; the source documents give one year more on average',
    assign: [{ column: 'age', expression: 'age + 1' }],
    narrow: { sql: 'age >= 60', test: (f) => Number(f[col('age')]) >= 60 },
  },
];

/** Columns guarded edits may touch, with a new value that always differs from the old one. */
const EDIT_COLUMNS: Array<{ column: Column; to: (from: string, r: () => number) => string }> = [
  { column: 'age', to: (from, r) => String(Number(from) + int(r, 1, 9)) },
  { column: 'systolic', to: (from, r) => String(Number(from) + int(r, 3, 30)) },
  { column: 'diastolic', to: (from, r) => String(Number(from) - int(r, 2, 20)) },
  { column: 'height_cm', to: (from, r) => String(round(Number(from) + (int(r, 1, 50) / 10) * (r() < 0.5 ? -1 : 1), 1)) },
  { column: 'weight_kg', to: (from, r) => String(round(Number(from) + (int(r, 1, 80) / 10) * (r() < 0.5 ? -1 : 1), 1)) },
  { column: 'glucose_mmol', to: (from, r) => String(round(Number(from) + int(r, 1, 150) / 100, 2)) },
  { column: 'score', to: (from, r) => String(round(Number(from) < 50 ? Number(from) + int(r, 1, 400) / 10 : Number(from) - int(r, 1, 400) / 10, 1)) },
];

export interface Planned {
  /** Cells the range changes, in total and per correction file. */
  cells: number;
  byCorrection: Record<string, number>;
  corrections: number;
  notes: number;
  commits: number;
}

interface PlannedCorrection {
  file: string;
  text: string;
  note: { id: string; text: string; day: number };
  /** The commit (0 = delivery) that adds the correction; its note comes one commit earlier. */
  commitDay: number;
  cells: number;
}

const ROUNDS = 10;

/** Decide every correction and count the cells it changes (one pass over all rows). */
function planCorrections(seed: number, rows: number): PlannedCorrection[] {
  const r = streamFor(seed, rows, 101);
  const given = new Set<string>(); // `${batch}:${column}` pairs already given to a correction
  const freeBatch = (columns: Column[]) => {
    for (let attempt = 0; attempt < 10_000; attempt += 1) {
      const b = int(r, 1, BATCHES);
      if (columns.every((c) => !given.has(`${b}:${c}`))) return b;
    }
    throw new Error('no free batch left; use more rows');
  };

  interface Draft {
    slug: string;
    reason: string;
    steps: string;
    cells: () => number;
  }
  const drafts: Draft[] = [];

  // Two sentinel corrections over ranges of batches (reserved first, so no set-where correction
  // meets them), two recodes over the whole table (columns no other correction touches).
  const sentinel = (column: Column, code: string, first: number, last: number, reason: string) => {
    const plan = { counted: 0 };
    for (let b = first; b <= last; b += 1) given.add(`${b}:${column}`);
    drafts.push({
      slug: `${column.replaceAll('_', '-')}-sentinel`,
      reason,
      steps: `  - missing: { column: ${column}, values: [${code}] }\n    where: "form_batch BETWEEN ${first} AND ${last}"`,
      cells: () => plan.counted,
    });
    return { column, code, first, last, plan };
  };
  const sentinels = [
    sentinel('income_band', '-9', 1, 100, 'On form version 3 (batches 1 to 100), -9 means the participant declined to answer'),
    sentinel('smoker', '9', 101, 300, 'On form version 4 (batches 101 to 300), 9 means the smoking status is unknown'),
  ];
  const recodes = [
    { column: 'status' as Column, from: 'lost', to: 'lost_to_follow_up', plan: { counted: 0 }, reason: 'The coordinating centre reports "lost" as lost_to_follow_up' },
    { column: 'education' as Column, from: 'sec', to: 'secondary', plan: { counted: 0 }, reason: 'The tablet form abbreviated "secondary" as "sec"' },
  ];
  for (const rc of recodes) {
    drafts.push({
      slug: `${rc.column}-${rc.from}`,
      reason: rc.reason,
      steps: `  - recode: { column: ${rc.column}, map: { ${rc.from}: ${rc.to} }, else: keep }`,
      cells: () => rc.plan.counted,
    });
  }

  // 72 set-where corrections, cycling through the templates, on 3, 2 or 1 batches.
  const setPlans: Array<{ template: SetTemplate; batches: number[]; counted: number }> = [];
  for (let i = 0; i < 72; i += 1) {
    const template = SET_TEMPLATES[i % SET_TEMPLATES.length];
    const columns = template.assign.map((a) => a.column);
    const batches: number[] = [];
    for (let k = 0; k < 3 - (i % 3); k += 1) {
      const b = freeBatch(columns);
      for (const c of columns) given.add(`${b}:${c}`);
      batches.push(b);
    }
    batches.sort((a, b) => a - b);
    const plan = { template, batches, counted: 0 };
    setPlans.push(plan);
    const where = `${batches.length === 1 ? `form_batch = ${batches[0]}` : `form_batch IN (${batches.join(', ')})`}${template.narrow ? ` AND ${template.narrow.sql}` : ''}`;
    const assign = template.assign.map((a) => `${a.column}: ${JSON.stringify(a.expression)}`).join(', ');
    drafts.push({
      slug: template.slug,
      reason: `${template.reason} (form batch${batches.length > 1 ? 'es' : ''} ${batches.join(', ')})`,
      steps: `  - set: { ${assign} }\n    where: ${JSON.stringify(where)}`,
      cells: () => plan.counted,
    });
  }

  // One pass over every row counts what the set-where, sentinel and recode corrections change.
  const setsByBatch = new Map<number, typeof setPlans>();
  for (const p of setPlans) for (const b of p.batches) setsByBatch.set(b, [...(setsByBatch.get(b) ?? []), p]);
  for (let index = 0; index < rows; index += 1) {
    const f = generateRow(seed, index);
    const b = batchOf(index);
    for (const p of setsByBatch.get(b) ?? []) {
      if (!p.template.narrow || p.template.narrow.test(f)) p.counted += p.template.assign.length;
    }
    for (const s of sentinels) if (b >= s.first && b <= s.last && f[col(s.column)] === s.code) s.plan.counted += 1;
    for (const rc of recodes) if (f[col(rc.column)] === rc.from) rc.plan.counted += 1;
  }
  // 24 guarded edit corrections of 30 to 70 cells each, on cells no other correction touches.
  const edited = new Set<string>();
  for (let i = 0; i < 24; i += 1) {
    const columns = i % 4 === 3 ? [EDIT_COLUMNS[i % EDIT_COLUMNS.length], EDIT_COLUMNS[(i + 3) % EDIT_COLUMNS.length]] : [EDIT_COLUMNS[i % EDIT_COLUMNS.length]];
    const lines: string[] = [];
    const count = int(r, 30, 70);
    while (lines.length < count) {
      const spec = columns[lines.length % columns.length];
      const index = int(r, 0, rows - 1);
      const id = `${index}:${spec.column}`;
      if (edited.has(id) || given.has(`${batchOf(index)}:${spec.column}`)) continue;
      edited.add(id);
      const from = generateRow(seed, index)[col(spec.column)];
      const to = spec.to(from, r);
      if (Number(to) === Number(from)) throw new Error(`edit of ${keyOf(index)} ${spec.column} would not change it`);
      lines.push(`      - { key: ${keyOf(index)}, column: ${spec.column}, from: ${from}, to: ${to} }`);
    }
    const names = columns.map((c) => c.column).join(' and ');
    drafts.push({
      slug: `${columns.map((c) => c.column.replaceAll('_', '-')).join('-')}-source-check`,
      reason: `${names} of ${count} participants checked against the source documents and corrected`,
      steps: `  - edit:\n${lines.join('\n')}`,
      cells: () => count,
    });
  }

  // Interleave the kinds so every commit holds a mix; then number, date and cite notes.
  const order = drafts.map((d, i) => ({ d, sortKey: streamFor(seed, i, 202)() }));
  order.sort((a, b) => a.sortKey - b.sortKey);
  const perRound = Math.ceil(order.length / ROUNDS);
  return order.map(({ d }, i) => {
    const number = String(i + 1).padStart(4, '0');
    const round = Math.floor(i / perRound);
    const commitDay = 2 + 2 * round; // the note commit is day 1 + 2 * round
    const noteDay = commitDay - 1 - (i % 3 === 0 ? 1 : 0); // the decision is dated the day of its note commit, or the day before
    const id = `N-${number}`;
    const date = new Date((BASE_TIME + noteDay * DAY_SECONDS) * 1000).toISOString().slice(0, 10);
    return {
      file: `corrections/${TABLE}/${number}-${d.slug}.yaml`,
      text: `reason: ${JSON.stringify(d.reason)}\napproval: ${id}\nsteps:\n${d.steps}\n`,
      note: {
        id,
        day: noteDay,
        text: `---\nid: ${id}\napprover: ehartmann\nrole: principal investigator\ndate: ${date}\napproves: ${JSON.stringify(d.reason)}\n---\nDecided at the data review meeting of ${date}; the minutes list the forms concerned.\n`,
      },
      commitDay,
      cells: d.cells(),
    };
  });
}

// ---------------------------------------------------------------------------------------------
// Project files

const CONFIG = `# errata project (generated for the review benchmark; invented data)
tables:
  ${TABLE}:
    raw: raw/${TABLE}
    key: participant_id
    description: Clinic visits of an invented cohort study
`;

const CODEBOOK = `title: Clinic visits (invented)
primaryKey: participant_id
missingValues: ['']
fields:
  - { name: participant_id, type: string, constraints: { required: true, unique: true, pattern: 'P[0-9]{7}' } }
  - { name: form_batch, type: integer }
  - { name: site, type: string }
  - { name: arm, type: string, constraints: { enum: [A, B, C] } }
  - { name: sex, type: string, constraints: { enum: [F, M] } }
  - { name: enrolled_on, type: date }
  - { name: visit_date, type: date }
  - { name: age, type: integer, unit: years }
  - { name: height_cm, type: number, unit: cm }
  - { name: weight_kg, type: number, unit: kg }
  - { name: systolic, type: integer, unit: mmHg }
  - { name: diastolic, type: integer, unit: mmHg }
  - { name: glucose_mmol, type: number, unit: mmol/L }
  - { name: cholesterol_mmol, type: number, unit: mmol/L }
  - { name: smoker, type: integer }
  - { name: education, type: string }
  - { name: income_band, type: integer }
  - { name: score, type: number }
  - { name: region, type: string }
  - { name: status, type: string }
`;

const PEOPLE = `people:
  - id: ehartmann
    name: Elin Hartmann
    role: principal investigator
    approves:
      - table: ${TABLE}
        columns: all
`;

export interface ReviewProject {
  root: string;
  rows: number;
  rawFile: string;
  rawBytes: number;
  base: string;
  head: string;
  planned: Planned;
  reused: boolean;
}

/**
 * The project for (rows, seed) under bench/out/, generated and committed unless a complete one is
 * already there: the delivery commit (errata.yaml, codebook, people.yaml, the raw CSV), then ten
 * rounds of a commit adding approval notes and a commit adding the corrections that cite them.
 */
export async function ensureReviewProject(options: { rows: number; seed: number; log?: (line: string) => void }): Promise<ReviewProject> {
  const { rows, seed } = options;
  const log = options.log ?? (() => {});
  if (rows < BATCHES * 2) throw new Error(`--rows must be at least ${BATCHES * 2}`);
  const name = `review-${rows}-s${seed}`;
  const root = path.join(OUT_DIR, name);
  const stampFile = path.join(OUT_DIR, `${name}.json`);
  const fingerprint = { version: GENERATOR_VERSION, rows, seed };
  const rawFile = path.join(root, RAW_FILE);
  if (existsSync(stampFile) && existsSync(rawFile) && (await hasCommits(root))) {
    const stamp = JSON.parse(readFileSync(stampFile, 'utf8'));
    if (JSON.stringify(stamp.fingerprint) === JSON.stringify(fingerprint) && (await resolveRevision(root, 'HEAD')) === stamp.head) {
      return { root, rows, rawFile, rawBytes: readFileSync(rawFile).byteLength, base: stamp.base, head: stamp.head, planned: stamp.planned, reused: true };
    }
  }
  rmSync(root, { recursive: true, force: true });
  rmSync(stampFile, { force: true });
  mkdirSync(root, { recursive: true });

  let started = performance.now();
  const planned = planCorrections(seed, rows);
  const cells = planned.reduce((n, c) => n + c.cells, 0);
  log(`planned ${planned.length} corrections changing ${cells.toLocaleString('en-US')} cells in ${((performance.now() - started) / 1000).toFixed(1)} s`);

  await initRepo(root);
  writeText(root, '.gitignore', '.errata/\n');
  writeText(root, 'errata.yaml', CONFIG);
  writeText(root, `codebook/${TABLE}.yaml`, CODEBOOK);
  writeText(root, 'people.yaml', PEOPLE);
  log(`generating ${rows.toLocaleString('en-US')} rows into ${path.relative(REPO_ROOT, rawFile)}`);
  started = performance.now();
  writeCsv(rawFile, seed, rows);
  log(`  written in ${((performance.now() - started) / 1000).toFixed(1)} s; committing the delivery`);
  started = performance.now();
  const base = await commitAll(root, 'Delivery of 2 February 2026: visits', author(0));
  log(`  committed in ${((performance.now() - started) / 1000).toFixed(1)} s`);

  let commits = 0;
  let head = base;
  for (let round = 0; round < ROUNDS; round += 1) {
    const inRound = planned.filter((c) => c.commitDay === 2 + 2 * round);
    if (inRound.length === 0) continue;
    const notePaths = inRound.map((c) => `notes/${c.note.id}.md`);
    inRound.forEach((c, i) => writeText(root, notePaths[i], c.note.text));
    await commitPaths(root, notePaths, `Approval notes ${inRound[0].note.id} to ${inRound[inRound.length - 1].note.id}`, author(1 + 2 * round));
    for (const c of inRound) writeText(root, c.file, c.text);
    head = await commitPaths(root, inRound.map((c) => c.file), `Corrections ${path.basename(inRound[0].file).slice(0, 4)} to ${path.basename(inRound[inRound.length - 1].file).slice(0, 4)}`, author(2 + 2 * round));
    commits += 2;
  }
  const summary: Planned = {
    cells,
    byCorrection: Object.fromEntries(planned.map((c) => [c.file, c.cells])),
    corrections: planned.length,
    notes: planned.length,
    commits,
  };
  writeFileSync(stampFile, JSON.stringify({ fingerprint, base, head, planned: summary }, null, 1));
  return { root, rows, rawFile, rawBytes: readFileSync(rawFile).byteLength, base, head, planned: summary, reused: false };
}
