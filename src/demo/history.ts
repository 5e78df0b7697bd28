import { generateDelivery } from './cohort.js';
import {
  CODEBOOK_YAML,
  CONFIG_YAML,
  CORRECTIONS,
  DATA_MANAGER,
  DELIVERY_FILE,
  NOTES,
  PEOPLE_YAML,
  STATISTICIAN,
  TABLE,
  noteText,
  type DemoPerson,
} from './project-files.js';

/** One commit of the demo's history: the files it writes, who made it and when (UTC, to the minute). */
export interface DemoCommit {
  message: string;
  author: DemoPerson;
  at: string;
  files: Record<string, string>;
}

/** The commit that publishes the built outputs; its files are written by the build, not listed here. */
export const BUILD_COMMIT = { message: 'Build clean data', author: STATISTICIAN, at: '2025-02-21T11:00' } as const;

const correction = (number: string) => {
  const found = CORRECTIONS.find((c) => c.file.includes(`/${number}-`));
  if (!found) throw new Error(`demo: no correction ${number}`);
  return { [found.file]: found.text };
};

const note = (id: string) => ({ [`notes/${id}.md`]: noteText(NOTES[id]) });

/**
 * The project's history up to the build, oldest first: set-up, delivery and codebook, then each approval
 * note and each correction in a commit of its own, about a working day apart, as a data manager and a
 * statistician would make them.
 */
export function demoHistory(): DemoCommit[] {
  return [
    { message: `Declare the ${TABLE} table and who approves changes`, author: DATA_MANAGER, at: '2025-01-27T09:10', files: { 'errata.yaml': CONFIG_YAML, 'people.yaml': PEOPLE_YAML } },
    { message: 'Add the baseline delivery of 24 January 2025', author: DATA_MANAGER, at: '2025-01-28T09:25', files: { [DELIVERY_FILE]: generateDelivery().csv } },
    { message: 'Add the baseline codebook', author: STATISTICIAN, at: '2025-01-29T14:05', files: { [`codebook/${TABLE}.yaml`]: CODEBOOK_YAML } },
    { message: 'Record N-001: blood pressure names and the not-measured code', author: DATA_MANAGER, at: '2025-01-30T10:15', files: note('N-001') },
    { message: 'Rename the exported blood pressure columns', author: STATISTICIAN, at: '2025-01-31T11:40', files: correction('0001') },
    { message: 'Record N-002: training records at Vellacourt', author: DATA_MANAGER, at: '2025-02-03T09:50', files: note('N-002') },
    { message: 'Delete the three training records', author: STATISTICIAN, at: '2025-02-04T15:20', files: correction('0002') },
    { message: 'Record 999 in blood pressure as not measured', author: STATISTICIAN, at: '2025-02-05T10:30', files: correction('0003') },
    { message: 'Record N-003: smoking answers', author: DATA_MANAGER, at: '2025-02-06T09:05', files: note('N-003') },
    { message: 'Recode smoking status 4 (occasional) to current smoker', author: STATISTICIAN, at: '2025-02-07T13:45', files: correction('0004') },
    { message: 'Set ever smoked to yes for current and former smokers', author: STATISTICIAN, at: '2025-02-10T10:10', files: correction('0005') },
    { message: 'Record N-004: cigarettes per day written as text', author: DATA_MANAGER, at: '2025-02-11T09:30', files: note('N-004') },
    { message: 'Make cigarettes per day a whole-number column', author: STATISTICIAN, at: '2025-02-12T16:00', files: correction('0006') },
    { message: 'Record N-005: heights in inches at Quorrin Bay', author: DATA_MANAGER, at: '2025-02-13T08:55', files: note('N-005') },
    { message: 'Convert the Quorrin Bay inch heights to centimetres', author: STATISTICIAN, at: '2025-02-14T11:20', files: correction('0007') },
    { message: 'Record N-006: answers to query round 1', author: DATA_MANAGER, at: '2025-02-17T09:40', files: note('N-006') },
    { message: 'Correct a weight entered with a decimal slip', author: STATISTICIAN, at: '2025-02-18T10:05', files: correction('0008') },
    { message: 'Correct an impossible age', author: STATISTICIAN, at: '2025-02-18T10:25', files: correction('0009') },
    { message: 'Record N-007: body mass index from the analysis plan', author: DATA_MANAGER, at: '2025-02-19T14:30', files: note('N-007') },
    { message: 'Derive body mass index', author: STATISTICIAN, at: '2025-02-20T09:15', files: correction('0010') },
  ];
}

/** Seconds since the epoch for a "YYYY-MM-DDTHH:MM" time in UTC. */
export function epochSeconds(at: string): number {
  const match = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})$/.exec(at);
  if (!match) throw new Error(`demo: bad time ${at}`);
  const [, y, mo, d, h, mi] = match.map(Number);
  return Date.UTC(y, mo - 1, d, h, mi) / 1000;
}
