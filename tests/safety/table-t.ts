import type { TableConfig } from '../../src/project/config.js';

/** Table `t` with key `id`, delivered under raw/t: the table the safety tests load deliveries into. */
export const TABLE_T: TableConfig = {
  name: 't',
  raw: 'raw/t',
  deliveries: 'latest',
  key: ['id'],
  codebook: 'codebook/t.yaml',
  output: 'clean/t.csv',
  lineage: 'clean/t.lineage.parquet',
  corrections: 'corrections/t',
  line: 2,
};
