import { PLANTED, SITES } from './cohort.js';

/**
 * The demo project's files other than the delivery: configuration, people, codebook, approval notes
 * and correction files. Everything here is invented: the study, its sites, its people and their e-mails
 * (addresses under the reserved .example domain).
 */

export const TABLE = 'baseline';
export const DELIVERY_FILE = `raw/${TABLE}/2025-01-24-delivery.csv`;

export interface DemoPerson {
  id: string;
  name: string;
  email: string;
}

export const INVESTIGATOR: DemoPerson = { id: 'ovaltersen', name: 'Oona Valtersen', email: 'oona.valtersen@korvain-cohort.example' };
export const SITE_LEAD: DemoPerson = { id: 'ythorsby', name: 'Yannick Thorsby', email: 'yannick.thorsby@korvain-cohort.example' };
export const DATA_MANAGER: DemoPerson = { id: 'parendt', name: 'Pell Arendt', email: 'pell.arendt@korvain-cohort.example' };
export const STATISTICIAN: DemoPerson = { id: 'sokafor', name: 'Sunniva Okafor-Lund', email: 'sunniva.okafor-lund@korvain-cohort.example' };

export const CONFIG_YAML = `# errata project of the Korvain Valley Cohort (an invented study used as errata's demo).
project: Korvain Valley Cohort
description: Baseline visit of a cohort of adults aged 40 to 79 at five clinics.
tables:
  ${TABLE}:
    raw: raw/${TABLE}              # deliveries from the survey platform; the newest file is used
    key: participant_id
    description: One row per participant at the baseline visit.
`;

export const PEOPLE_YAML = `# Who may approve changes to the cohort's data. Approval notes name a person by id.
# The data manager and the statistician prepare corrections; they do not approve them.
people:
  - id: ${INVESTIGATOR.id}
    name: ${INVESTIGATOR.name}
    role: principal investigator
    email: ${INVESTIGATOR.email}
    approves:
      - table: ${TABLE}
        columns: all
  - id: ${SITE_LEAD.id}
    name: ${SITE_LEAD.name}
    role: site lead, Quorrin Bay clinic
    email: ${SITE_LEAD.email}
    approves:
      - table: ${TABLE}
        columns: [height_cm]
  - id: ${DATA_MANAGER.id}
    name: ${DATA_MANAGER.name}
    role: data manager
    email: ${DATA_MANAGER.email}
  - id: ${STATISTICIAN.id}
    name: ${STATISTICIAN.name}
    role: statistician
    email: ${STATISTICIAN.email}
`;

const siteLabels = SITES.map((s) => `"${s.code}": ${s.name}`).join(', ');
const siteCodes = SITES.map((s) => `"${s.code}"`).join(', ');

/** The analysis data set's variables; the description says where the export's names differ. */
export const CODEBOOK_YAML = `title: Korvain Valley Cohort, baseline visit
description: >-
  One row per participant at the baseline visit, as the analysis data set holds it. The survey
  platform exports blood pressure as sys_bp and dia_bp, and cigarettes per day as text in cigs_per_day.
primaryKey: participant_id
missingValues: [""]
fields:
  - name: participant_id
    type: string
    title: Participant identifier
    constraints: { required: true, unique: true, pattern: "KV-[0-9]{5}" }
  - name: site
    type: string
    title: Study site
    description: Three-digit site code; the leading zeros are part of the code.
    constraints: { required: true, enum: [${siteCodes}] }
    labels: { ${siteLabels} }
  - name: visit_date
    type: date
    title: Date of the baseline visit
    constraints: { required: true, minimum: "2024-03-01", maximum: "2024-12-31" }
  - name: age
    type: integer
    title: Age at the baseline visit
    unit: years
    description: "Inclusion criterion: 40 to 79 years."
    constraints: { required: true, minimum: 40, maximum: 79 }
  - name: sex
    type: integer
    title: Sex
    constraints: { required: true, enum: [1, 2] }
    labels: { 1: male, 2: female }
  - name: education
    type: integer
    title: Highest completed education
    constraints: { enum: [1, 2, 3, 4] }
    labels: { 1: primary, 2: secondary, 3: vocational, 4: university }
  - name: smoking_status
    type: integer
    title: Smoking status
    constraints: { required: true, enum: [1, 2, 3] }
    labels: { 1: never smoked, 2: former smoker, 3: current smoker }
  - name: ever_smoked
    type: string
    title: Ever smoked at least 100 cigarettes
    constraints: { enum: ["yes", "no"] }
  - name: systolic_bp
    type: integer
    title: Systolic blood pressure
    unit: mmHg
    description: Exported as sys_bp. On the form, 999 means not measured.
    constraints: { minimum: 70, maximum: 250 }
  - name: diastolic_bp
    type: integer
    title: Diastolic blood pressure
    unit: mmHg
    description: Exported as dia_bp. On the form, 999 means not measured.
    constraints: { minimum: 40, maximum: 150 }
  - name: height_cm
    type: number
    title: Height
    unit: cm
    constraints: { minimum: 120, maximum: 220 }
  - name: weight_kg
    type: number
    title: Weight
    unit: kg
    constraints: { minimum: 30, maximum: 250 }
  - name: cholesterol_mmol
    type: number
    title: Total cholesterol
    unit: mmol/L
    constraints: { minimum: 2, maximum: 12 }
  - name: cigarettes_per_day
    type: integer
    title: Cigarettes smoked per day
    description: 0 for participants who do not smoke now. Exported as text in cigs_per_day; on the form, -99 means not asked.
    constraints: { minimum: 0, maximum: 80 }
  - name: bmi
    type: number
    title: Body mass index
    unit: kg/m2
    description: Derived as weight_kg / (height_cm / 100)^2, rounded to one decimal (analysis plan, section 4.2).
rules:
  - name: smokers-have-smoked
    assert: "smoking_status IS NULL OR smoking_status = 1 OR ever_smoked = 'yes'"
    message: A current or former smoker must have answered yes to "ever smoked"
    severity: error
  - name: diastolic-below-systolic
    assert: "diastolic_bp IS NULL OR systolic_bp IS NULL OR diastolic_bp < systolic_bp"
    message: Diastolic pressure must be below systolic pressure
    severity: error
  - name: only-smokers-count-cigarettes
    assert: "smoking_status = 3 OR cigarettes_per_day IS NULL OR cigarettes_per_day = 0"
    message: Only current smokers report cigarettes per day
    severity: warning
`;

export interface NoteSpec {
  id: string;
  approver: DemoPerson;
  role: string;
  date: string;
  approves: string;
  evidence: string;
}

/** notes/<id>.md: front matter, then the evidence. */
export function noteText(note: NoteSpec): string {
  return `---
id: ${note.id}
approver: ${note.approver.id}
role: ${note.role}
date: ${note.date}
approves: ${JSON.stringify(note.approves)}
---
${note.evidence.trim()}
`;
}

function mail(from: DemoPerson, to: DemoPerson, date: string, subject: string, body: string): string {
  return `From: ${from.name} <${from.email}>
To: ${to.name} <${to.email}>
Date: ${date}
Subject: ${subject}

${body.trim()}`;
}

const PI_ROLE = 'principal investigator';
const words = PLANTED.cigarettesInWords;
const ids = (list: readonly string[]) => list.join(', ');

export const NOTES: Record<string, NoteSpec> = {
  'N-001': {
    id: 'N-001',
    approver: INVESTIGATOR,
    role: PI_ROLE,
    date: '2025-01-30',
    approves: 'Codebook names for the exported blood pressure columns; 999 in blood pressure means not measured',
    evidence: mail(INVESTIGATOR, DATA_MANAGER, '30 January 2025', 'Re: Baseline delivery, blood pressure columns', `
Pell,

Yes, the platform's sys_bp and dia_bp are the codebook's systolic_bp and diastolic_bp. Please use the
codebook's names in the analysis data set.

And yes, 999 is what the case report form tells the nurses to write when a reading could not be taken
(cuff did not fit, participant declined). Those are not measurements: record them as missing.

Oona

> On 29 January 2025, Pell Arendt wrote:
> The delivery names the blood pressure columns sys_bp and dia_bp. Eight participants have 999 in one
> or both readings (${ids([...PLANTED.bloodPressureNotMeasured, ...PLANTED.diastolicNotMeasured])}).
> May I rename the columns and record 999 as missing?
`),
  },
  'N-002': {
    id: 'N-002',
    approver: INVESTIGATOR,
    role: PI_ROLE,
    date: '2025-02-03',
    approves: `Delete the training records ${ids(PLANTED.trainingRecords)}`,
    evidence: mail(INVESTIGATOR, DATA_MANAGER, '3 February 2025', 'Re: Three records dated before the first visit', `
Pell,

Those three are the practice records the Vellacourt nurses typed in at the site initiation visit on
27 February 2024, before the first participant was seen. They are not participants. Please remove them
from the analysis data set; the platform team will purge them from the next export.

Oona
`),
  },
  'N-003': {
    id: 'N-003',
    approver: INVESTIGATOR,
    role: PI_ROLE,
    date: '2025-02-06',
    approves: 'Smoking status 4 counts as current smoker; current or former smokers answered yes to ever smoked',
    evidence: mail(INVESTIGATOR, DATA_MANAGER, '6 February 2025', 'Re: Smoking questions, two queries', `
Pell,

1. Code 4 ("occasional smoker") was only on version 1 of the form, used in the first weeks. The protocol
   counts occasional smokers as current smokers, so 4 becomes 3 (${ids(PLANTED.smokingCode4)}).

2. The five current smokers at Ostrelle who answered "no" to ever smoked (${ids(PLANTED.everSmokedNo)}):
   the Ostrelle tablets prefilled "no" for that item until the form was fixed in June. Smoking status
   was asked by the nurse and is the reliable answer. Where status says current or former smoker and
   ever smoked says no, set ever smoked to yes.

Oona
`),
  },
  'N-004': {
    id: 'N-004',
    approver: INVESTIGATOR,
    role: PI_ROLE,
    date: '2025-02-11',
    approves: 'Cigarettes per day written in words as numbers; -99 (not asked) as missing; one whole-number column',
    evidence: mail(INVESTIGATOR, DATA_MANAGER, '11 February 2025', 'Re: Cigarettes per day as text', `
Pell,

Agreed for all of them: ${words.map((w) => `"${w.text}" is ${w.value}`).filter((v, i, all) => all.indexOf(v) === i).join(', ')}
(packs here hold 20). -99 means the interviewer did not ask; record it as missing, not as a count.
Keep the analysis variable as whole numbers under the codebook's name, cigarettes_per_day, and drop the
text column once it is converted.

Oona

> On 10 February 2025, Pell Arendt wrote:
> cigs_per_day holds words in ${words.length} rows:
> ${words.map((w) => `${w.id}: "${w.text}"`).join(',\n> ')};
> and -99 in ${PLANTED.cigarettesNotAsked.length} rows (${ids(PLANTED.cigarettesNotAsked)}).
`),
  },
  'N-005': {
    id: 'N-005',
    approver: SITE_LEAD,
    role: 'site lead, Quorrin Bay clinic',
    date: '2025-02-12',
    approves: 'Heights under 90 at site 012 are inches; convert them to centimetres',
    evidence: mail(SITE_LEAD, DATA_MANAGER, '12 February 2025', 'Re: Heights under 90 cm at Quorrin Bay', `
Dear Pell,

In May 2024 our stadiometer was away for repair and we measured with a borrowed one marked in inches.
The nurses wrote the inch reading into the centimetre field. Every height under 90 from our clinic is one
of those inch readings (${ids(PLANTED.heightInInches)}); please multiply them by 2.54 and keep one decimal.

Yannick Thorsby
Site lead, Quorrin Bay clinic
`),
  },
  'N-006': {
    id: 'N-006',
    approver: INVESTIGATOR,
    role: PI_ROLE,
    date: '2025-02-17',
    approves: `Query round 1: weight of ${PLANTED.weightDecimalSlip.id} is ${PLANTED.weightDecimalSlip.corrected} kg; age of ${PLANTED.impossibleAge.id} is ${PLANTED.impossibleAge.corrected}`,
    evidence: mail(INVESTIGATOR, DATA_MANAGER, '17 February 2025', 'Query round 1, answers from the sites', `
Pell,

The sites have checked the source documents for the two open queries:

Q-014  ${PLANTED.weightDecimalSlip.id}, weight_kg ${PLANTED.weightDecimalSlip.raw}: the paper form reads ${PLANTED.weightDecimalSlip.corrected} kg; the
       decimal point was misplaced at data entry. Correct it to ${PLANTED.weightDecimalSlip.corrected}.
Q-015  ${PLANTED.impossibleAge.id}, age ${PLANTED.impossibleAge.raw}: the date of birth on the consent form gives ${PLANTED.impossibleAge.corrected} years at
       the visit. Correct it to ${PLANTED.impossibleAge.corrected}.

Oona
`),
  },
  'N-007': {
    id: 'N-007',
    approver: INVESTIGATOR,
    role: PI_ROLE,
    date: '2025-02-19',
    approves: 'Derive body mass index as in the statistical analysis plan, section 4.2',
    evidence: mail(INVESTIGATOR, STATISTICIAN, '19 February 2025', 'Re: BMI in the analysis data set', `
Sunniva,

Yes, please add BMI to the analysis data set as written in the analysis plan (section 4.2): weight in
kilograms divided by the square of height in metres, one decimal, computed after the height and weight
corrections so the Quorrin Bay heights are in centimetres first.

Oona
`),
  },
};

export interface CorrectionSpec {
  file: string;
  text: string;
}

const edit = (id: string, column: string, from: string, to: string) => `      - { key: "${id}", column: ${column}, from: ${from}, to: ${to} }`;

/** The correction files, numbered in the order they apply. Each cites its approval note. */
export const CORRECTIONS: CorrectionSpec[] = [
  {
    file: `corrections/${TABLE}/0001-blood-pressure-names.yaml`,
    text: `reason: The survey platform exports blood pressure as sys_bp and dia_bp; the codebook names them systolic_bp and diastolic_bp
approval: N-001
steps:
  - rename: { sys_bp: systolic_bp, dia_bp: diastolic_bp }
`,
  },
  {
    file: `corrections/${TABLE}/0002-training-records.yaml`,
    text: `reason: Remove the practice records typed in at the Vellacourt site initiation visit
approval: N-002
steps:
  - delete:
      where: "participant_id IN (${PLANTED.trainingRecords.map((id) => `'${id}'`).join(', ')})"
      reason: training entries made by site staff, not participants
`,
  },
  {
    file: `corrections/${TABLE}/0003-blood-pressure-not-measured.yaml`,
    text: `reason: 999 in blood pressure is the form's code for not measured, not a reading
approval: N-001
steps:
  - missing:
      columns: [systolic_bp, diastolic_bp]
      values: ["999"]
`,
  },
  {
    file: `corrections/${TABLE}/0004-smoking-code-4.yaml`,
    text: `reason: Smoking status 4 (occasional smoker) is from version 1 of the form; the protocol counts occasional smokers as current smokers
approval: N-003
steps:
  - recode:
      column: smoking_status
      map: { "4": "3" }
      else: keep
`,
  },
  {
    file: `corrections/${TABLE}/0005-ever-smoked.yaml`,
    text: `reason: Current or former smokers recorded as never having smoked; the Ostrelle tablet form prefilled "no"
approval: N-003
steps:
  - set: { ever_smoked: "'yes'" }
    where: "smoking_status IN (2, 3) AND ever_smoked = 'no'"
`,
  },
  {
    file: `corrections/${TABLE}/0006-cigarettes-per-day.yaml`,
    text: `reason: Cigarettes per day arrived as text, some answers in words and -99 for not asked; make it a whole-number column
approval: N-004
steps:
  - edit:
${words.map((w) => edit(w.id, 'cigs_per_day', `"${w.text}"`, `"${w.value}"`)).join('\n')}
  - missing: { column: cigs_per_day, values: ["-99"] }
  - convert: { column: cigs_per_day, to: integer, as: cigarettes_per_day }
  - drop: [cigs_per_day]
`,
  },
  {
    file: `corrections/${TABLE}/0007-heights-in-inches.yaml`,
    text: `reason: Heights under 90 at the Quorrin Bay clinic (site 012) were measured in inches in May 2024; convert to centimetres
approval: N-005
steps:
  - set: { height_cm: "round(height_cm * 2.54, 1)" }
    where: "site = '012' AND height_cm < 90"
`,
  },
  {
    file: `corrections/${TABLE}/0008-weight-decimal-slip.yaml`,
    text: `reason: Weight entered with the decimal point one place off (query Q-014, checked against the paper form)
approval: N-006
steps:
  - edit:
${edit(PLANTED.weightDecimalSlip.id, 'weight_kg', PLANTED.weightDecimalSlip.raw, PLANTED.weightDecimalSlip.corrected)}
`,
  },
  {
    file: `corrections/${TABLE}/0009-impossible-age.yaml`,
    text: `reason: Age of ${PLANTED.impossibleAge.raw} years (query Q-015); the date of birth on the consent form gives ${PLANTED.impossibleAge.corrected}
approval: N-006
steps:
  - edit:
${edit(PLANTED.impossibleAge.id, 'age', PLANTED.impossibleAge.raw, PLANTED.impossibleAge.corrected)}
`,
  },
  {
    file: `corrections/${TABLE}/0010-body-mass-index.yaml`,
    text: `reason: Body mass index for the analysis, from the corrected height and weight (analysis plan, section 4.2)
approval: N-007
steps:
  - derive: { bmi: "round(weight_kg / pow(height_cm / 100, 2), 1)" }
`,
  },
];
