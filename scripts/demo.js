#!/usr/bin/env node
// A guided run of errata on the demo study: create it in a fresh temporary folder, then build, show the
// audit trail, explain a few corrected cells, verify the committed outputs and write the HTML report,
// each with the real CLI.
// Needs dist/ (npm install builds it; otherwise npm run build). Exits non-zero when a step fails.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const repo = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const cli = path.join(repo, 'bin', 'errata.js');

if (!existsSync(path.join(repo, 'dist', 'cli', 'main.js'))) {
  console.error('dist/ is missing: run `npm run build` first.');
  process.exit(2);
}

const bold = (text) => (process.stdout.isTTY && !process.env.NO_COLOR ? `\x1b[1m${text}\x1b[22m` : text);
const parent = mkdtempSync(path.join(tmpdir(), 'errata-demo-'));
const project = path.join(parent, 'korvain-valley-cohort');
const report = path.join(parent, 'report.html');

const steps = [
  {
    title: 'Create the demo project',
    what: 'An invented cohort study (2,400 participants, 5 clinics): raw delivery, codebook, people, approval notes and correction files, each committed by its author.',
    args: ['init', '--demo', project],
    cwd: parent,
  },
  {
    title: 'Build the clean data',
    what: 'Raw delivery + corrections, applied in order with DuckDB; every changed cell goes into the lineage.',
    args: ['build'],
  },
  {
    title: 'The audit trail',
    what: 'Every correction: who committed it, when, why, who approved it, and what it changed.',
    args: ['log'],
  },
  {
    title: 'Why: a height measured in inches',
    what: 'The Quorrin Bay clinic wrote inch readings into the centimetre field in May 2024.',
    args: ['why', 'baseline', 'KV-00188', 'height_cm'],
  },
  {
    title: 'Why: a weight with a decimal slip',
    what: '71.2 kg was entered as 7.12; the site checked the paper form.',
    args: ['why', 'baseline', 'KV-00417', 'weight_kg'],
  },
  {
    title: 'Why: an impossible age',
    what: 'Age 214; the date of birth on the consent form gives 41.',
    args: ['why', 'baseline', 'KV-01388', 'age'],
  },
  {
    title: 'Verify the committed clean data',
    what: 'Rebuild from raw + corrections and compare with the committed clean/ outputs, byte for byte.',
    args: ['verify'],
  },
  {
    title: 'A report for reviewers',
    what: 'One self-contained HTML page: overview, raw against clean with plots, the changed cells, the review and the audit trail.',
    args: ['report', '--out', report],
  },
];

console.log(`errata demo in ${project}`);
for (const [index, step] of steps.entries()) {
  console.log('');
  console.log(bold(`${index + 1}. ${step.title}`));
  console.log(step.what);
  console.log(`$ errata ${step.args.map((a) => (a === project ? path.basename(project) : a === report ? '../report.html' : a)).join(' ')}`);
  const started = process.hrtime.bigint();
  const result = spawnSync(process.execPath, [cli, ...step.args], { cwd: step.cwd ?? project, stdio: 'inherit' });
  const seconds = Number(process.hrtime.bigint() - started) / 1e9;
  if (result.status !== 0) {
    console.error(`\nStep ${index + 1} (${step.title}) failed with exit code ${result.status ?? result.signal}.`);
    process.exit(result.status || 1);
  }
  console.log(`(${seconds.toFixed(1)} s)`);
}
console.log('');
console.log(bold('All steps passed.'));
console.log(`Open the report in a browser: ${pathToFileURL(report).href}`);
console.log(`The project stays in ${project}. To explore it:`);
console.log(`  cd ${project} && node ${cli} why baseline KV-00264 cigarettes_per_day`);
console.log('  (or `npm link` once in this checkout, then plain `errata …` works anywhere)');
