import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/**
 * raretide's version from its package.json, found by walking up from this file, which sits at a
 * different depth in the sources (`connector/cli/`) than in the build (`dist/connector/cli/`).
 */
export function packageVersion(): string {
  let directory = dirname(fileURLToPath(import.meta.url));
  for (;;) {
    try {
      const manifest = JSON.parse(readFileSync(join(directory, 'package.json'), 'utf8')) as { name?: string; version?: string };
      if (manifest.name === 'raretide' && manifest.version !== undefined) return manifest.version;
    } catch {
      // No package.json here; keep walking up.
    }
    const parent = dirname(directory);
    if (parent === directory) return 'unknown';
    directory = parent;
  }
}
