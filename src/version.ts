import { readFileSync } from 'node:fs';

/** The tool's version, from package.json, recorded in every manifest. */
export const VERSION: string = (JSON.parse(readFileSync(new URL('../package.json', import.meta.url), 'utf8')) as { version: string }).version;
