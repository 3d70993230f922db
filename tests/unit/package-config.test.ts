// The packaging configuration (electron-builder.json) as data, since packages cannot be built without
// a network: it must be what electron-builder accepts (its own JSON schema, app-builder-lib/scheme.json),
// name the targets a line installs from, take every file the built app loads and nothing else, leave
// the native database module outside the archive (a .node file cannot be loaded from inside an asar:
// electron.build, "asarUnpack"), and flip the fuses Electron's security checklist advises
// (electronjs.org/docs/latest/tutorial/fuses). Patterns are matched with minimatch, the matcher
// electron-builder itself uses for "files" and "asarUnpack".

import { describe, expect, it } from 'vitest';
import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { builtinModules } from 'node:module';
import { join, relative, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { minimatch } from 'minimatch';
import Ajv from 'ajv';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const config = JSON.parse(readFileSync(join(ROOT, 'electron-builder.json'), 'utf8'));
const pkg = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8'));

function filesUnder(folder: string): string[] {
  return readdirSync(join(ROOT, folder), { recursive: true, withFileTypes: true })
    .filter((entry) => entry.isFile())
    .map((entry) => relative(ROOT, join(entry.parentPath, entry.name)).split(sep).join('/'));
}

/**
 * A model of electron-builder's "files" rule, not electron-builder itself: a file is taken when the
 * last pattern that matches it is not a negation (electron.build, "File Patterns"). electron-builder
 * also adds package.json and the production node_modules on its own, which the next test covers.
 */
function packed(file: string): boolean {
  let taken = false;
  for (const pattern of config.files as string[]) {
    const negated = pattern.startsWith('!');
    if (minimatch(file, negated ? pattern.slice(1) : pattern, { dot: true })) taken = !negated;
  }
  return taken;
}

describe('electron-builder.json', () => {
  it('is a configuration electron-builder’s own schema accepts', () => {
    const schema = JSON.parse(readFileSync(join(ROOT, 'node_modules', 'app-builder-lib', 'scheme.json'), 'utf8'));
    const ajv = new Ajv({ allErrors: true, strict: false });
    const validate = ajv.compile(schema);
    const { $schema: _, ...body } = config;
    expect(validate(body), JSON.stringify(validate.errors, null, 2)).toBe(true);
  });

  it('builds AppImage and deb for Linux, an NSIS installer for Windows and a dmg for macOS', () => {
    expect(config.linux.target).toEqual(['AppImage', 'deb']);
    expect(config.win.target).toEqual(['nsis']);
    expect(config.mac.target).toEqual(['dmg']);
    expect(pkg.scripts.package).toBe('node scripts/package.mjs');
  });

  it('packs every file of the built app, and none of its sources, tests or source maps', () => {
    const built = [...filesUnder('out/main'), ...filesUnder('out/preload'), ...filesUnder('out/renderer')];
    expect(built.length).toBeGreaterThan(5);
    for (const file of built.filter((f) => !f.endsWith('.map'))) expect(packed(file), file).toBe(true);
    expect(packed('package.json')).toBe(true);
    for (const file of ['electron/main/index.ts', 'shared/ipc/contract.ts', 'tests/unit/package-config.test.ts', 'out/test-results.json', 'out/main/index.js.map', '.cache/node/x', 'scripts/start.mjs', 'resources/build/icon.svg']) {
      expect(packed(file), file).toBe(false);
    }
    // What the main process reads beside itself: the preload and the renderer folder (electron/main/index.ts).
    expect(existsSync(join(ROOT, 'out/preload/index.cjs'))).toBe(true);
    expect(existsSync(join(ROOT, 'out/renderer/index.html'))).toBe(true);
  });

  it('ships every package the main bundle imports as a dependency, never as a devDependency', () => {
    const bundle = readFileSync(join(ROOT, 'out/main/index.js'), 'utf8');
    const imported = new Set([...bundle.matchAll(/^import .* from "([^"]+)";$/gm)].map((m) => m[1]!));
    const packages = [...imported].filter((name) => !name.startsWith('node:') && !builtinModules.includes(name) && name !== 'electron');
    expect(packages.length).toBeGreaterThan(0);
    for (const name of packages) {
      const root = name.startsWith('@') ? name.split('/').slice(0, 2).join('/') : name.split('/')[0]!;
      expect(pkg.dependencies?.[root], `${root} is imported by the main bundle`).toBeDefined();
    }
    // Electron itself is the runtime the packager adds, never a dependency of the app (electron-builder refuses it).
    expect(pkg.dependencies?.electron).toBeUndefined();
  });

  it('leaves better-sqlite3’s native binary outside the archive', () => {
    expect(config.asar).toBe(true);
    const binaries = filesUnder('node_modules/better-sqlite3').filter((file) => file.endsWith('.node'));
    expect(binaries.length).toBeGreaterThan(0);
    for (const binary of binaries) expect((config.asarUnpack as string[]).some((pattern) => minimatch(binary, pattern)), binary).toBe(true);
  });

  it('sets the fuses the security checklist advises', () => {
    // Embedded asar integrity validation is left off until a signed Windows and macOS build has been
    // tried with it: a package whose archive hash does not match exits at launch without a word.
    expect(config.electronFuses.enableEmbeddedAsarIntegrityValidation).not.toBe(true);
    expect(config.electronFuses).toMatchObject({
      runAsNode: false,
      enableNodeOptionsEnvironmentVariable: false,
      enableNodeCliInspectArguments: false,
      enableCookieEncryption: true,
      onlyLoadAppFromAsar: true,
      grantFileProtocolExtraPrivileges: false,
    });
  });

  it('asks macOS for the microphone with a reason, and ships the icon, the demo procedure and the example record', () => {
    // Apple: an app that captures audio must say why (NSMicrophoneUsageDescription), and under the
    // hardened runtime hold the audio-input entitlement; V8's JIT needs allow-jit.
    expect(config.mac.extendInfo.NSMicrophoneUsageDescription).toMatch(/audio interface/);
    expect(config.mac.hardenedRuntime).toBe(true);
    const entitlements = readFileSync(join(ROOT, config.mac.entitlements), 'utf8');
    expect(entitlements).toMatch(/<key>com\.apple\.security\.device\.audio-input<\/key>\s*<true\/>/);
    expect(entitlements).toMatch(/<key>com\.apple\.security\.cs\.allow-jit<\/key>\s*<true\/>/);
    // PNG (ISO/IEC 15948): the signature, then IHDR's width and height. electron-builder makes a
    // macOS icon from a PNG of at least 512 × 512 and a Windows one from at least 256 × 256.
    for (const icon of new Set([config.linux.icon, config.win.icon, config.mac.icon])) {
      const png = readFileSync(join(ROOT, icon));
      expect(png.subarray(0, 8)).toEqual(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]));
      expect([png.readUInt32BE(16), png.readUInt32BE(20)]).toEqual([1024, 1024]);
    }
    for (const resource of config.extraResources as { from: string }[]) {
      expect(statSync(join(ROOT, resource.from)).isDirectory(), resource.from).toBe(true);
      expect(readdirSync(join(ROOT, resource.from)).length, resource.from).toBeGreaterThan(0);
    }
  });
});
