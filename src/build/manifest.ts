import type { RawInput } from './load-raw.js';

export const MANIFEST_FILE = 'clean/manifest.json';

export interface OutputRecord {
  path: string;
  sha256: string;
}

export interface TableManifest {
  inputs: RawInput[];
  /** Codebook and correction files, in the order they apply, by git blob id. */
  sources: RawInput[];
  outputs: {
    data: OutputRecord & { rows: number; columns: number };
    lineage: OutputRecord & { records: number };
  };
}

export interface Manifest {
  tool: { name: 'errata'; version: string };
  tables: Record<string, TableManifest>;
}

/**
 * The manifest as text: keys in a fixed order, tables sorted by name, no clock time and no absolute
 * paths, so the same inputs give the same bytes on every machine.
 */
export function renderManifest(manifest: Manifest): string {
  const tables: Record<string, TableManifest> = {};
  for (const name of Object.keys(manifest.tables).sort()) {
    const t = manifest.tables[name];
    tables[name] = {
      inputs: t.inputs.map((i) => ({ path: i.path, blob: i.blob })),
      sources: t.sources.map((s) => ({ path: s.path, blob: s.blob })),
      outputs: {
        data: { path: t.outputs.data.path, sha256: t.outputs.data.sha256, rows: t.outputs.data.rows, columns: t.outputs.data.columns },
        lineage: { path: t.outputs.lineage.path, sha256: t.outputs.lineage.sha256, records: t.outputs.lineage.records },
      },
    };
  }
  return JSON.stringify({ tool: { name: 'errata', version: manifest.tool.version }, tables }, null, 2) + '\n';
}

export function parseManifest(text: string): Manifest | null {
  try {
    const parsed = JSON.parse(text) as Manifest;
    return parsed && typeof parsed === 'object' && parsed.tables ? parsed : null;
  } catch {
    return null;
  }
}
