import { readFileSync } from 'node:fs';
import { join } from 'node:path';

/** The package version, read once from package.json next to dist/. */
export const VERSION: string = (() => {
  try {
    return JSON.parse(readFileSync(join(__dirname, '..', 'package.json'), 'utf8')).version as string;
  } catch {
    return '0.0.0-unknown';
  }
})();
