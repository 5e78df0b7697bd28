import { ErrataError } from '../errors.js';

export interface DemoSummary {
  root: string;
  rows: number;
  columns: number;
  commits: number;
}

export async function createDemoProject(dir: string): Promise<DemoSummary> {
  throw new ErrataError('USAGE', `the demo is not available yet (${dir})`);
}
