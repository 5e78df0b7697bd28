/**
 * A large invented data project for the benchmarks: one table, `visits`, delivered as one CSV of
 * `rows` rows and 20 columns, a codebook, approval notes and 30 correction files of every step kind,
 * committed in its own git repository under bench/out/ (git-ignored).
 *
 * Everything is derived from a seed: the same seed and row count give the same bytes, so a project
 * already on disk is reused instead of regenerated.
 */
import { closeSync, existsSync, mkdirSync, openSync, readFileSync, rmSync, writeFileSync, writeSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { commitAll, hasCommits, initRepo } from '../src/git/repo.js';
import { bell, dayOf, int, isoDay, permutation, pick, round, streamFor, writeText } from './generated-data.js';

export const BENCH_DIR = path.dirname(fileURLToPath(import.meta.url));
export const REPO_ROOT = path.resolve(BENCH_DIR, '..');
export const OUT_DIR = path.join(BENCH_DIR, 'out');

/** Bump when the generator changes, so older projects on disk are rebuilt rather than reused. */
const GENERATOR_VERSION = 4;

export const TABLE = 'visits';
export const RAW_FILE = `raw/${TABLE}/2026-01-15-visits.csv`;

export const COLUMNS = [
  'participant_id', 'site', 'arm', 'sex', 'enrolled_on', 'visit_date', 'age', 'height_cm', 'weight_kg', 'systolic',
  'diastolic', 'glucose_mmol', 'smoker', 'education', 'income_band', 'visits', 'score', 'region', 'consent', 'status',
] as const;

const AUTHOR = { name: 'Bench Author', email: 'bench@example.org', timestamp: 1_767_225_600, timezoneOffset: 0 };

export interface BenchProject {
  root: string;
  rows: number;
  columns: number;
  corrections: number;
  rawFile: string;
  rawBytes: number;
  /** True when the project was found on disk and reused. */
  reused: boolean;
}

const SITES = Array.from({ length: 12 }, (_, i) => `HB${String(i + 1).padStart(2, '0')}`);
const REGION_OF_SITE = ['north', 'north', 'north', 'east', 'east', 'south', 'south', 'central', 'central', 'west', 'west', 'west'];
const REGIONS = ['north', 'south', 'east', 'west', 'central'];
const EDUCATION = ['none', 'primary', 'secondary', 'tertiary'];

/** One generated row as CSV fields ('' is missing), plus facts the correction generator needs. */
export interface GeneratedRow {
  fields: string[];
  /** Systolic and diastolic were delivered in each other's place. */
  swapped: boolean;
}

export function generateRow(seed: number, index: number): GeneratedRow {
  const r = streamFor(seed, index);
  const u = () => r();
  const f: string[] = new Array(COLUMNS.length);
  f[0] = `P${String(index + 1).padStart(7, '0')}`;
  // HB12 is a small site (3 %); the others share the rest.
  const siteIndex = u() < 0.03 ? 11 : int(r, 0, 10);
  f[1] = SITES[siteIndex];
  f[2] = pick(r, ['A', 'B', 'C']);
  let sex = u() < 0.5 ? 'F' : 'M';
  const sexNoise = u();
  if (sexNoise < 0.01) sex = '';
  else if (sexNoise < 0.013) sex = sex.toLowerCase();
  f[3] = sex;
  const year = int(r, 2019, 2024);
  const month = int(r, 1, 12);
  const day = int(r, 1, 28);
  const enrolled = dayOf(year, month, day);
  // A few enrolment years were typed a decade early (2012 for 2022).
  f[4] = u() < 0.004 ? isoDay(dayOf(year - 10, month, day)) : isoDay(enrolled);
  const visitNoise = u();
  if (visitNoise < 0.02) f[5] = '';
  else if (visitNoise < 0.04) f[5] = isoDay(enrolled - int(r, 1, 60));
  else f[5] = isoDay(enrolled + int(r, 0, 400));
  f[6] = u() < 0.005 ? '999' : String(int(r, 18, 90));
  const height = round(bell(r, 145, 200), 1);
  const heightNoise = u();
  if (heightNoise < 0.015) f[7] = String(round(height / 2.54, 1));
  else if (heightNoise < 0.018) f[7] = String(Math.round(height * 10));
  else f[7] = String(height);
  const weight = round(bell(r, 45, 125), 1);
  const weightNoise = u();
  if (weightNoise < 0.01) f[8] = '';
  else if (weightNoise < 0.02 && weight > 70) f[8] = String(round(weight * 2.2046, 1));
  else if (weightNoise < 0.025) f[8] = String(round(20 + u() * 14, 1));
  else f[8] = String(weight);
  let systolic = int(r, 100, 175);
  let diastolic = int(r, 55, Math.min(105, systolic - 15));
  const swapped = u() < 0.005;
  if (swapped) [systolic, diastolic] = [diastolic, systolic];
  f[9] = u() < 0.003 ? '-1' : String(systolic);
  f[10] = String(diastolic);
  const glucoseNoise = u();
  const glucose = round(bell(r, 3.8, 9.5), 2);
  if (glucoseNoise < 0.03) f[11] = '';
  else if (glucoseNoise < 0.05) f[11] = String(Math.round(glucose * 18.016));
  else if (glucoseNoise < 0.055) f[11] = String(round(0.8 + u() * 0.6, 2));
  else f[11] = String(glucose);
  f[12] = u() < 0.02 ? '9' : u() < 0.22 ? '1' : '0';
  const educationNoise = u();
  f[13] = educationNoise < 0.01 ? pick(r, ['Secondary', 'sec', 'Primary']) : pick(r, EDUCATION);
  const incomeNoise = u();
  f[14] = incomeNoise < 0.005 ? '-9' : incomeNoise < 0.015 ? '' : String(int(r, 1, 5));
  f[15] = u() < 0.01 ? 'n/a' : String(int(r, 0, 12));
  const scoreNoise = u();
  const score = round(u() * 100, 1);
  if (scoreNoise < 0.01) f[16] = '';
  else if (scoreNoise < 0.02) f[16] = String(round(100 + u() * 20, 1));
  else if (siteIndex === 5 && scoreNoise < 0.12) f[16] = String(round(score / 10, 1));
  else f[16] = String(score);
  f[17] = (siteIndex === 7 || siteIndex === 8) && u() < 0.2 ? pick(r, REGIONS) : REGION_OF_SITE[siteIndex];
  const consentNoise = u();
  const consent = consentNoise < 0.05 ? 'no' : 'yes';
  f[18] = u() < 0.002 ? (consent === 'yes' ? 'Y' : 'N') : consent;
  const statusNoise = u();
  f[19] = statusNoise < 0.6 ? 'active' : statusNoise < 0.92 ? 'completed' : statusNoise < 0.97 ? 'withdrawn' : 'lost';
  return { fields: f, swapped };
}

function writeCsv(file: string, seed: number, rows: number): void {
  mkdirSync(path.dirname(file), { recursive: true });
  const fd = openSync(file, 'w');
  try {
    writeSync(fd, COLUMNS.join(',') + '\n');
    const order = permutation(seed, rows);
    const batch: string[] = [];
    for (let i = 0; i < rows; i += 1) {
      batch.push(generateRow(seed, order[i]).fields.join(','));
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
// Project files

const CONFIG = `# errata project (generated for benchmarks; invented data)
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
  - { name: site, type: string }
  - { name: arm, type: string, constraints: { enum: [A, B, C] } }
  - { name: sex, type: string, constraints: { enum: [F, M] } }
  - { name: enrolled_on, type: date }
  - { name: visit_date, type: date }
  - { name: age, type: integer, unit: years, constraints: { minimum: 18, maximum: 100 } }
  - { name: height_cm, type: number, unit: cm }
  - { name: weight_kg, type: number, unit: kg }
  - { name: systolic, type: integer, unit: mmHg }
  - { name: diastolic, type: integer, unit: mmHg }
  - { name: glucose_mmol, type: number, unit: mmol/L }
  - { name: smoker, type: integer, labels: { '0': never, '1': current } }
  - { name: education, type: string, constraints: { enum: [none, primary, secondary, tertiary] } }
  - { name: income_band, type: integer, constraints: { minimum: 1, maximum: 5 } }
  - { name: visits, type: integer }
  - { name: score, type: number, constraints: { minimum: 0, maximum: 100 } }
  - { name: region, type: string }
  - { name: consent, type: string, constraints: { enum: ['yes', 'no'] } }
  - { name: status, type: string }
rules:
  - { name: visit-after-enrolment, assert: 'visit_date IS NULL OR visit_date >= enrolled_on', severity: warning }
`;

const PEOPLE = `people:
  - id: mhalvorsen
    name: Maren Halvorsen
    role: principal investigator
    approves:
      - table: ${TABLE}
        columns: all
`;

/** Guarded edits need the value a cell holds when the edit applies: regenerate chosen rows. */
function editCells(seed: number, rows: number, salt: number, count: number, column: 'diastolic' | 'score', used: Set<number>) {
  const r = streamFor(seed, rows, salt);
  const col = COLUMNS.indexOf(column);
  const cells: string[] = [];
  let missingFrom = column === 'score' ? 2 : 0;
  while (cells.length < count) {
    const index = Math.floor(r() * rows);
    if (used.has(index)) continue;
    const row = generateRow(seed, index);
    const value = row.fields[col];
    if (row.swapped || row.fields[9] === '-1') continue;
    if (column === 'score') {
      const wantMissing = missingFrom > 0;
      if (wantMissing !== (value === '')) continue;
      if (value !== '' && (Number(value) > 100 || row.fields[1] === 'HB06')) continue;
      if (wantMissing) missingFrom -= 1;
    }
    used.add(index);
    const key = row.fields[0];
    if (column === 'diastolic') {
      const from = Number(value);
      const to = Number(String(from).split('').reverse().join('')) || from + 10;
      cells.push(`      - { key: ${key}, column: diastolic, from: ${from}, to: ${to === from ? from + 10 : to} }`);
    } else {
      const to = round(r() * 100, 1);
      cells.push(`      - { key: ${key}, column: score, from: ${value === '' ? '~' : value}, to: ${to} }`);
    }
  }
  return cells.join('\n');
}

interface CorrectionSpec {
  slug: string;
  reason: string;
  steps: string;
}

function corrections(seed: number, rows: number): CorrectionSpec[] {
  const used = new Set<number>();
  const set = (assign: string, where: string) => `  - set: { ${assign} }\n    where: ${JSON.stringify(where)}`;
  return [
    { slug: 'height-inches', reason: 'Heights under 90 were entered in inches at intake; convert to centimetres', steps: set('height_cm: "round(height_cm * 2.54, 1)"', 'height_cm < 90') },
    { slug: 'age-sentinel', reason: '999 is the intake form code for "age not given"', steps: '  - missing: { column: age, values: [999] }' },
    { slug: 'sex-case', reason: 'Lower-case sex codes come from the tablet form; same codes as upper case', steps: '  - recode: { column: sex, map: { f: F, m: M }, else: keep }' },
    { slug: 'diastolic-transcription', reason: 'Diastolic readings with transposed digits, checked against the paper forms', steps: `  - edit:\n${editCells(seed, rows, 11, 8, 'diastolic', used)}` },
    { slug: 'weight-pounds', reason: 'Weights over 150 were recorded in pounds; convert to kilograms', steps: set('weight_kg: "round(weight_kg * 0.4536, 1)"', 'weight_kg > 150') },
    { slug: 'weight-scale-hb03', reason: 'The HB03 scale read in pounds above 110 until it was replaced', steps: set('weight_kg: "round(weight_kg / 2.2046, 1)"', "site = 'HB03' AND weight_kg > 110") },
    { slug: 'visit-before-enrolment', reason: 'Visits dated before enrolment were the enrolment visit itself', steps: set('visit_date: "enrolled_on"', 'visit_date < enrolled_on') },
    { slug: 'education-labels', reason: 'Free-text education entries mapped to the coded levels', steps: '  - recode:\n      column: education\n      map: { Secondary: secondary, sec: secondary, Primary: primary }\n      else: keep' },
    { slug: 'smoker-unknown', reason: '9 means "unknown" on the smoking question', steps: '  - missing: { column: smoker, values: [9] }' },
    { slug: 'glucose-mg-dl', reason: 'Glucose above 30 was reported in mg/dL; convert to mmol/L', steps: set('glucose_mmol: "round(glucose_mmol / 18.016, 2)"', 'glucose_mmol > 30') },
    { slug: 'site-hb12-merged', reason: 'Site HB12 was a satellite of HB02 and is reported under it', steps: set("site: \"'HB02'\"", "site = 'HB12'") },
    { slug: 'arm-hb05-spring-2021', reason: 'HB05 randomised arm C as B during the spring 2021 supply shortage', steps: set("arm: \"'B'\"", "site = 'HB05' AND enrolled_on BETWEEN DATE '2021-03-01' AND DATE '2021-05-31' AND arm = 'C'") },
    { slug: 'diastolic-second-pass', reason: 'Second pass over the paper forms found more transposed diastolic readings', steps: `  - edit:\n${editCells(seed, rows, 13, 12, 'diastolic', used)}` },
    { slug: 'blood-pressure-income-sentinels', reason: '-1 and -9 are the export\'s codes for "not measured" and "declined"', steps: '  - missing: { columns: [systolic, income_band], values: [-1, -9] }' },
    { slug: 'consent-codes', reason: 'Y and N from the paper consent forms', steps: '  - recode: { column: consent, map: { Y: "yes", N: "no" } }' },
    { slug: 'score-cap', reason: 'Scores above 100 include bonus items that the protocol excludes', steps: set('score: "100"', 'score > 100') },
    { slug: 'weight-child-scale-hb07', reason: 'HB07 weights under 35 came from the paediatric scale and cannot be trusted', steps: '  - missing: { column: weight_kg }\n    where: "site = \'HB07\' AND weight_kg < 35"' },
    { slug: 'status-lost', reason: 'The coordinating centre reports "lost" as lost_to_follow_up', steps: '  - recode: { column: status, map: { lost: lost_to_follow_up }, else: keep }' },
    { slug: 'visits-not-available', reason: '"n/a" in the visit count means the count was not collected', steps: '  - missing: { column: visits, values: [n/a] }' },
    { slug: 'age-hb04-2023', reason: 'HB04 recorded age at last birthday before the visit from 2023 on; protocol asks for age at visit', steps: set('age: "age + 1"', "site = 'HB04' AND enrolled_on >= DATE '2023-01-01'") },
    { slug: 'height-millimetres', reason: 'Heights above 1000 were entered in millimetres', steps: set('height_cm: "height_cm / 10"', 'height_cm > 1000') },
    { slug: 'blood-pressure-swapped', reason: 'Systolic below diastolic means the two were entered in each other\'s field', steps: set('systolic: "diastolic", diastolic: "systolic"', 'systolic < diastolic') },
    { slug: 'region-hb08-hb09', reason: 'Sites HB08 and HB09 are in the central region whatever the participant typed', steps: set("region: \"'central'\"", "site IN ('HB08', 'HB09') AND region <> 'central'") },
    { slug: 'score-rechecked', reason: 'Scores re-marked by the second assessor', steps: `  - edit:\n${editCells(seed, rows, 17, 6, 'score', used)}` },
    { slug: 'enrolment-decade-typo', reason: 'Enrolment years before 2015 were typed a decade early', steps: set('enrolled_on: "make_date(year(enrolled_on) + 10, month(enrolled_on), day(enrolled_on))"', 'year(enrolled_on) < 2015') },
    { slug: 'score-hb06-out-of-ten', reason: 'HB06 entered some scores out of 10', steps: set('score: "round(score * 10, 1)"', "site = 'HB06' AND score < 10") },
    { slug: 'consent-withdrawn', reason: 'Participants without consent cannot be active', steps: set("status: \"'withdrawn'\"", "consent = 'no' AND status = 'active'") },
    { slug: 'visit-count', reason: 'Visit count as a number for analysis', steps: '  - convert: { column: visits, to: integer, as: visit_count }' },
    { slug: 'blood-pressure-units', reason: 'Name the blood pressure columns with their unit', steps: '  - rename: { systolic: systolic_mmhg, diastolic: diastolic_mmhg }' },
    { slug: 'bmi', reason: 'Body mass index for the analysis plan', steps: '  - derive: { bmi: "round(weight_kg / pow(height_cm / 100, 2), 1)" }' },
  ];
}

function correctionFile(spec: CorrectionSpec, number: number): string {
  return `reason: ${JSON.stringify(spec.reason)}\napproval: N-${String(number).padStart(4, '0')}\nsteps:\n${spec.steps}\n`;
}

function noteFile(spec: CorrectionSpec, number: number, date: string): string {
  const id = `N-${String(number).padStart(4, '0')}`;
  return `---\nid: ${id}\napprover: mhalvorsen\nrole: principal investigator\ndate: ${date}\napproves: ${JSON.stringify(spec.reason)}\n---\nDecided at the data review meeting; see the minutes of ${date}.\n`;
}

/**
 * The project for (rows, seed) under bench/out/, generated and committed unless a complete one is
 * already there. Returns where it is and what it holds.
 */
export async function ensureProject(options: { rows: number; seed: number; log?: (line: string) => void }): Promise<BenchProject> {
  const { rows, seed } = options;
  const log = options.log ?? (() => {});
  const name = `build-${rows}-s${seed}`;
  const root = path.join(OUT_DIR, name);
  const stamp = path.join(OUT_DIR, `${name}.json`);
  const fingerprint = JSON.stringify({ version: GENERATOR_VERSION, rows, seed });
  const specs = corrections(seed, rows);
  const result = (reused: boolean): BenchProject => {
    const rawFile = path.join(root, RAW_FILE);
    return { root, rows, columns: COLUMNS.length, corrections: specs.length, rawFile, rawBytes: readFileSync(rawFile).byteLength, reused };
  };
  if (existsSync(stamp) && readFileSync(stamp, 'utf8') === fingerprint && existsSync(path.join(root, RAW_FILE)) && (await hasCommits(root))) {
    return result(true);
  }
  rmSync(root, { recursive: true, force: true });
  rmSync(stamp, { force: true });
  mkdirSync(root, { recursive: true });
  await initRepo(root);
  writeText(root, '.gitignore', '.errata/\n');
  writeText(root, 'errata.yaml', CONFIG);
  writeText(root, `codebook/${TABLE}.yaml`, CODEBOOK);
  writeText(root, 'people.yaml', PEOPLE);
  log(`generating ${rows.toLocaleString('en-US')} rows into ${path.relative(REPO_ROOT, path.join(root, RAW_FILE))}`);
  let started = performance.now();
  writeCsv(path.join(root, RAW_FILE), seed, rows);
  log(`  written in ${((performance.now() - started) / 1000).toFixed(1)} s`);
  specs.forEach((spec, i) => {
    const number = i + 1;
    const date = isoDay(dayOf(2026, 1, 20) + i);
    writeText(root, `corrections/${TABLE}/${String(number).padStart(4, '0')}-${spec.slug}.yaml`, correctionFile(spec, number));
    writeText(root, `notes/N-${String(number).padStart(4, '0')}.md`, noteFile(spec, number, date));
  });
  log('committing the project');
  started = performance.now();
  await commitAll(root, 'Add the visits delivery, codebook, notes and corrections', AUTHOR);
  log(`  committed in ${((performance.now() - started) / 1000).toFixed(1)} s`);
  writeFileSync(stamp, fingerprint);
  return result(false);
}
