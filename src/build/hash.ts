import { createHash } from 'node:crypto';
import { hashOfFile } from '../file-hash.js';

export function sha256OfFile(file: string): Promise<string> {
  return hashOfFile(file, 'sha256');
}

export function sha256Of(content: Uint8Array | string): string {
  return createHash('sha256').update(content).digest('hex');
}
