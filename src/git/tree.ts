import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync, realpathSync, statSync } from 'node:fs';
import { ErrataError } from '../errors.js';
import { writableDir } from '../scratch.js';
import path from 'node:path';
import { blobIdAt, listBlobsAt, readBlobAt, readBlobById, resolveRevision } from './repo.js';
import { writeFileAtomically } from '../write-file.js';
import { hashOfFile } from '../file-hash.js';

/**
 * The project's files as they stand somewhere: the working tree, or a commit read straight from git
 * objects (no checkout, so it works in a bare clone). Paths are repository-relative with forward slashes.
 */
export interface ProjectTree {
  /** "working tree" or the abbreviated commit id. */
  readonly label: string;
  /** The commit id, or null for the working tree. */
  readonly commit: string | null;
  readonly root: string;
  read(filepath: string): Promise<Buffer | null>;
  /** Files under a folder (recursively), sorted by path. */
  list(folder: string): Promise<string[]>;
  /** A path on disk holding the file's content, for DuckDB to read. */
  localPath(filepath: string): Promise<string>;
  /** The git blob id of the file's content: the same id git itself gives it. */
  blobId(filepath: string): Promise<string>;
}

export class WorkingTree implements ProjectTree {
  readonly label = 'working tree';
  readonly commit = null;
  constructor(readonly root: string) {}

  async read(filepath: string): Promise<Buffer | null> {
    const full = this.inside(filepath);
    return existsSync(full) && statSync(full).isFile() ? readFileSync(full) : null;
  }

  async list(folder: string): Promise<string[]> {
    const out: string[] = [];
    const visit = (rel: string) => {
      const full = this.inside(rel);
      if (!existsSync(full)) return;
      if (statSync(full).isFile()) {
        out.push(rel);
        return;
      }
      for (const name of readdirSync(full)) {
        if (name.startsWith('.')) continue;
        visit(rel ? `${rel}/${name}` : name);
      }
    };
    visit(folder.replace(/\/+$/, ''));
    return out.sort(byPath);
  }

  async localPath(filepath: string): Promise<string> {
    return this.inside(filepath);
  }

  async blobId(filepath: string): Promise<string> {
    return gitBlobIdOfFile(this.inside(filepath));
  }

  /**
   * The file's path on disk, refusing one reached through a symbolic link: a link in a pull request
   * could point anywhere on the reviewer's machine (a raw file linked to /etc/passwd, a raw/ folder
   * linked out of the repository), and git at a commit would not follow it either.
   */
  private inside(filepath: string): string {
    const full = path.join(this.root, filepath);
    let real: string;
    try {
      real = realpathSync(full);
    } catch {
      return full; // missing: the caller reports that
    }
    if (real !== path.join(realpathSync(this.root), filepath).replace(/[\\/]+$/, '')) {
      throw new ErrataError('PATH_OUTSIDE', `${filepath} is reached through a symbolic link (to ${real}); errata reads only regular files in the repository`, {
        hint: 'Copy the file into the repository instead of linking it.',
        data: { file: filepath },
      });
    }
    return full;
  }
}

export class RevisionTree implements ProjectTree {
  readonly label: string;
  private constructor(
    readonly root: string,
    readonly commit: string,
    private readonly blobDir: string,
  ) {
    this.label = commit.slice(0, 7);
  }

  /** `blobDir` is where blobs are unpacked for DuckDB, named by blob id so they are never stale. */
  static async at(root: string, revision: string, blobDir: string): Promise<RevisionTree> {
    const commit = await resolveRevision(root, revision);
    return new RevisionTree(root, commit, blobDir);
  }

  async read(filepath: string): Promise<Buffer | null> {
    const blob = await readBlobAt(this.root, this.commit, filepath);
    if (!blob) return null;
    await blobIdAt(this.root, this.commit, filepath); // refuses a symbolic link
    return Buffer.from(blob.content);
  }

  async list(folder: string): Promise<string[]> {
    const clean = folder.replace(/\/+$/, '');
    const direct = await readBlobAt(this.root, this.commit, clean).catch(() => null);
    if (direct) return [clean];
    return (await listBlobsAt(this.root, this.commit, clean))
      .map((e) => e.path)
      .filter((p) => !p.split('/').some((part) => part.startsWith('.')));
  }

  async localPath(filepath: string): Promise<string> {
    const oid = await this.blobId(filepath);
    const name = `${oid}${path.extname(filepath)}`;
    let target = path.join(this.blobDir, name);
    if (!existsSync(target)) {
      const content = await readBlobById(this.root, oid);
      target = path.join(writableDir(this.blobDir), name);
      if (!existsSync(target)) writeFileAtomically(target, content, { hint: 'Check that .errata/tmp is writable and the disk not full.' });
    }
    return target;
  }

  async blobId(filepath: string): Promise<string> {
    const oid = await blobIdAt(this.root, this.commit, filepath);
    if (!oid) throw new Error(`${filepath} does not exist at ${this.label}`);
    return oid;
  }
}

function byPath(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

/** git's blob id: sha1 over "blob <size>\0" and the content, streamed so large files stay cheap. */
export async function gitBlobIdOfFile(file: string): Promise<string> {
  return hashOfFile(file, 'sha1', `blob ${statSync(file).size}\0`);
}

export function gitBlobIdOf(content: Uint8Array): string {
  return createHash('sha1').update(`blob ${content.length}\0`).update(content).digest('hex');
}
