// The layer rule (DEVELOPERS.md, "The layer rule"): shared ← electron, shared ← renderer, and
// electron and renderer never import each other. tsconfig keeps DOM and Node out of shared/;
// this test catches what tsconfig cannot: imports across the two app layers.

import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync } from 'node:fs';
import { join, relative, resolve, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const IMPORT = /(?:import|export)\s[^'"]*?from\s*['"]([^'"]+)['"]|import\s*\(\s*['"]([^'"]+)['"]\s*\)|import\s+['"]([^'"]+)['"]/g;

function sourceFiles(folder: string): string[] {
  return readdirSync(join(ROOT, folder), { recursive: true, withFileTypes: true })
    .filter((entry) => entry.isFile() && /\.(ts|tsx)$/.test(entry.name))
    .map((entry) => join(entry.parentPath, entry.name));
}

function importsOf(file: string): string[] {
  const text = readFileSync(file, 'utf8');
  return [...text.matchAll(IMPORT)].map((m) => m[1] ?? m[2] ?? m[3]);
}

function layerOf(file: string, specifier: string): string {
  if (!specifier.startsWith('.')) return `package:${specifier}`;
  return relative(ROOT, resolve(dirname(file), specifier)).split(/[\\/]/)[0];
}

const HINT = 'see DEVELOPERS.md, "The layer rule"';

describe('layer rule', () => {
  it('shared/ imports only shared/ and pure packages', () => {
    const pure = new Set(['package:zod', 'package:fft.js', 'package:ml-levenberg-marquardt']);
    for (const file of sourceFiles('shared')) {
      for (const specifier of importsOf(file)) {
        const layer = layerOf(file, specifier);
        expect(layer === 'shared' || pure.has(layer), `${relative(ROOT, file)} imports ${specifier} (${HINT})`).toBe(true);
      }
    }
  });

  it('electron/ never imports renderer/', () => {
    for (const file of sourceFiles('electron')) {
      for (const specifier of importsOf(file)) {
        expect(layerOf(file, specifier), `${relative(ROOT, file)} imports ${specifier} (${HINT})`).not.toBe('renderer');
      }
    }
  });

  it('renderer/ never imports electron/ or the electron package', () => {
    for (const file of sourceFiles('renderer')) {
      for (const specifier of importsOf(file)) {
        expect(['electron', 'package:electron'], `${relative(ROOT, file)} imports ${specifier} (${HINT})`).not.toContain(
          layerOf(file, specifier),
        );
      }
    }
  });

  it('the built renderer and preload carry no zod (validation lives in main)', () => {
    const bundles = ['out/renderer/assets', 'out/preload'].flatMap((folder) => {
      try {
        return readdirSync(join(ROOT, folder)).filter((name) => /\.c?js$/.test(name)).map((name) => join(ROOT, folder, name));
      } catch {
        return []; // not built: `npm test` builds first; a bare vitest run skips this check
      }
    });
    for (const bundle of bundles) expect(readFileSync(bundle, 'utf8'), `${bundle} bundles zod`).not.toMatch(/ZodError|\$ZodType/);
  });
});
