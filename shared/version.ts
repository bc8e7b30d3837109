import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/**
 * The code version recorded in sweep.json and reports: the package version.
 * Found by walking up from this file, so it works from sources and from dist/.
 */
function readCodeVersion(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 5; i++) {
    const candidate = join(dir, 'package.json');
    if (existsSync(candidate)) {
      const pkg = JSON.parse(readFileSync(candidate, 'utf8')) as { name?: string; version?: string };
      if (pkg.name === 'recallscape' && typeof pkg.version === 'string') return pkg.version;
    }
    dir = dirname(dir);
  }
  return '0.0.0-unknown';
}

export const CODE_VERSION: string = readCodeVersion();
