import { createRandom, type Random } from './random.js';

/**
 * The demo study's baseline delivery: an invented cohort (the Korvain Valley Cohort), generated from a
 * fixed seed, with the classic problems of a real delivery planted in a known handful of rows. The
 * correction files of the demo name these rows, so they are listed here, once.
 */

export const SEED = 20_250_124;
export const PARTICIPANTS = 2_400;

/** The columns as the survey platform exports them (the codebook's names differ for blood pressure). */
export const RAW_COLUMNS = [
  'participant_id',
  'site',
  'visit_date',
  'age',
  'sex',
  'education',
  'smoking_status',
  'ever_smoked',
  'cigs_per_day',
  'sys_bp',
  'dia_bp',
  'height_cm',
  'weight_kg',
  'cholesterol_mmol',
] as const;

export type RawColumn = (typeof RAW_COLUMNS)[number];
export type RawRow = Record<RawColumn, string>;

/** Study sites: code (text, leading zeros kept) and the invented town of the clinic. */
export const SITES = [
  { code: '003', name: 'Vellacourt', weight: 24 },
  { code: '007', name: 'Nimbury Cross', weight: 22 },
  { code: '012', name: 'Quorrin Bay', weight: 18 },
  { code: '015', name: 'Ostrelle', weight: 20 },
  { code: '021', name: 'Fenwarde', weight: 16 },
] as const;

export const INCH_SITE = '012';
export const CONTRADICTION_SITE = '015';

/** The rows that carry each planted problem, and what they hold in the delivery. */
export const PLANTED = {
  /** Smoking status 4 ("occasional smoker") from version 1 of the form: not in the codebook. */
  smokingCode4: ['KV-00052', 'KV-00311', 'KV-00786', 'KV-01140', 'KV-01675', 'KV-02209'],
  /** Current smokers whose "ever smoked" answer says no (the tablet form at Ostrelle prefilled "no"). */
  everSmokedNo: ['KV-00128', 'KV-00903', 'KV-01452', 'KV-01817', 'KV-02330'],
  /** Cigarettes per day written in words. */
  cigarettesInWords: [
    { id: 'KV-00264', text: 'ten', value: '10' },
    { id: 'KV-00340', text: 'none', value: '0' },
    { id: 'KV-00655', text: 'twenty', value: '20' },
    { id: 'KV-01029', text: 'ten', value: '10' },
    { id: 'KV-01207', text: 'none', value: '0' },
    { id: 'KV-01563', text: 'half a pack', value: '10' },
    { id: 'KV-01999', text: 'five', value: '5' },
    { id: 'KV-02101', text: 'none', value: '0' },
  ],
  /** -99: the interviewer did not ask. */
  cigarettesNotAsked: ['KV-00477', 'KV-01311', 'KV-01702', 'KV-02044'],
  /** 999: blood pressure not measured (both readings, or the diastolic alone). */
  bloodPressureNotMeasured: ['KV-00093', 'KV-00730', 'KV-01166', 'KV-01590', 'KV-02012', 'KV-02376'],
  diastolicNotMeasured: ['KV-00845', 'KV-01933'],
  /** Heights measured in inches at Quorrin Bay in May 2024. */
  heightInInches: ['KV-00188', 'KV-00502', 'KV-00611', 'KV-00979', 'KV-01244', 'KV-01486', 'KV-01760', 'KV-02151', 'KV-02287'],
  /** 71.2 kg entered as 7.12. */
  weightDecimalSlip: { id: 'KV-00417', raw: '7.12', corrected: '71.2' },
  /** 41 years entered as 214. */
  impossibleAge: { id: 'KV-01388', raw: '214', corrected: '41' },
  /** Records typed in while site staff were trained; not participants. */
  trainingRecords: ['KV-90001', 'KV-90002', 'KV-90003'],
} as const;

export interface Delivery {
  /** The delivery as CSV text: header, one line per record, "\n" line ends. */
  csv: string;
  rows: RawRow[];
}

const FIRST_VISIT = Date.UTC(2024, 2, 4);
const VISIT_DAYS = 270;
const DAY_MS = 86_400_000;

/** The whole delivery, the same on every run. */
export function generateDelivery(): Delivery {
  const random = createRandom(SEED);
  const rows: RawRow[] = [];
  for (let i = 1; i <= PARTICIPANTS; i += 1) rows.push(participant(random, participantId(i)));
  plantProblems(random, rows);
  rows.push(...trainingRecords());
  rows.sort((a, b) => (a.site !== b.site ? (a.site < b.site ? -1 : 1) : a.participant_id < b.participant_id ? -1 : 1));
  return { csv: toCsv(rows), rows };
}

export function participantId(n: number): string {
  return `KV-${String(n).padStart(5, '0')}`;
}

/** One participant as the platform would export them when nothing went wrong. */
function participant(random: Random, id: string): RawRow {
  const site = random.weighted(SITES.map((s) => [s.code, s.weight] as const));
  const visit = weekday(FIRST_VISIT + random.int(0, VISIT_DAYS - 1) * DAY_MS);
  const age = random.int(40, 79);
  const sex = random.weighted([['1', 48], ['2', 52]] as const);
  const education = random.weighted([['1', 15], ['2', 38], ['3', 27], ['4', 20]] as const);
  const smoking = random.weighted([['1', 52], ['2', 30], ['3', 18]] as const);
  const cigarettes = clamp(Math.round(random.normal(14, 7)), 1, 60);
  const systolic = clamp(Math.round(random.normal(118 + 0.5 * (age - 40), 16)), 90, 220);
  const diastolic = Math.min(clamp(Math.round(random.normal(78, 10)), 50, 130), systolic - 20);
  const height = sex === '1' ? random.normal(176, 7) : random.normal(163, 6.5);
  const bmi = clamp(random.normal(27, 4.5), 17, 45);
  const weight = bmi * (height / 100) ** 2;
  const cholesterol = clamp(random.normal(5.4, 1), 2.5, 9.5);
  const cholesterolTaken = random.next() >= 0.02;
  return {
    participant_id: id,
    site,
    visit_date: isoDate(visit),
    age: String(age),
    sex,
    education,
    smoking_status: smoking,
    ever_smoked: smoking === '1' ? 'no' : 'yes',
    cigs_per_day: smoking === '3' ? String(cigarettes) : '0',
    sys_bp: String(systolic),
    dia_bp: String(diastolic),
    height_cm: height.toFixed(1),
    weight_kg: weight.toFixed(1),
    cholesterol_mmol: cholesterolTaken ? cholesterol.toFixed(1) : '',
  };
}

function plantProblems(random: Random, rows: RawRow[]): void {
  const byId = new Map(rows.map((r) => [r.participant_id, r]));
  const used = new Set<string>();
  const row = (id: string): RawRow => {
    const found = byId.get(id);
    if (!found || used.has(id)) throw new Error(`demo cohort: ${id} is not a participant or is planted twice`);
    used.add(id);
    return found;
  };
  for (const id of PLANTED.smokingCode4) {
    Object.assign(row(id), { smoking_status: '4', ever_smoked: 'yes', cigs_per_day: String(random.int(1, 4)) });
  }
  for (const id of PLANTED.everSmokedNo) {
    Object.assign(row(id), { site: CONTRADICTION_SITE, smoking_status: '3', ever_smoked: 'no', cigs_per_day: String(random.int(5, 25)) });
  }
  for (const { id, text } of PLANTED.cigarettesInWords) {
    const smoker = text !== 'none';
    Object.assign(row(id), { smoking_status: smoker ? '3' : '1', ever_smoked: smoker ? 'yes' : 'no', cigs_per_day: text });
  }
  for (const id of PLANTED.cigarettesNotAsked) row(id).cigs_per_day = '-99';
  for (const id of PLANTED.bloodPressureNotMeasured) Object.assign(row(id), { sys_bp: '999', dia_bp: '999' });
  for (const id of PLANTED.diastolicNotMeasured) row(id).dia_bp = '999';
  for (const id of PLANTED.heightInInches) {
    const r = row(id);
    const may = weekday(Date.UTC(2024, 4, 6) + random.int(0, 24) * DAY_MS);
    Object.assign(r, { site: INCH_SITE, visit_date: isoDate(may), height_cm: (Number(r.height_cm) / 2.54).toFixed(1) });
  }
  Object.assign(row(PLANTED.weightDecimalSlip.id), { weight_kg: PLANTED.weightDecimalSlip.raw });
  Object.assign(row(PLANTED.impossibleAge.id), { age: PLANTED.impossibleAge.raw });
}

function trainingRecords(): RawRow[] {
  const base = { site: '003', visit_date: '2024-02-27', education: '3', cholesterol_mmol: '5.0' };
  return [
    { ...base, participant_id: PLANTED.trainingRecords[0], age: '50', sex: '1', smoking_status: '1', ever_smoked: 'no', cigs_per_day: '0', sys_bp: '120', dia_bp: '80', height_cm: '175.0', weight_kg: '75.0' },
    { ...base, participant_id: PLANTED.trainingRecords[1], age: '60', sex: '2', smoking_status: '2', ever_smoked: 'yes', cigs_per_day: '0', sys_bp: '130', dia_bp: '85', height_cm: '165.0', weight_kg: '65.0' },
    { ...base, participant_id: PLANTED.trainingRecords[2], age: '45', sex: '1', smoking_status: '3', ever_smoked: 'yes', cigs_per_day: '20', sys_bp: '140', dia_bp: '90', height_cm: '180.0', weight_kg: '90.0' },
  ];
}

/** Saturdays and Sundays move to the Monday after: the clinics see participants on weekdays. */
function weekday(ms: number): number {
  const day = new Date(ms).getUTCDay();
  return day === 6 ? ms + 2 * DAY_MS : day === 0 ? ms + DAY_MS : ms;
}

function isoDate(ms: number): string {
  return new Date(ms).toISOString().slice(0, 10);
}

function clamp(value: number, min: number, max: number): number {
  return Math.min(max, Math.max(min, value));
}

/** The values hold no delimiter, quote or line break, so no field needs quoting. */
function toCsv(rows: readonly RawRow[]): string {
  const lines = [RAW_COLUMNS.join(',')];
  for (const r of rows) lines.push(RAW_COLUMNS.map((c) => r[c]).join(','));
  return lines.join('\n') + '\n';
}
