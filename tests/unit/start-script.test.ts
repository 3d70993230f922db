// `npm start` (scripts/start.mjs) on a first start: the Electron runtime is fetched when missing,
// then electron-vite's preview opens the app; without a network it stops with one line. The script
// runs unchanged in a copy of the project's layout (its own node_modules/electron, without the
// runtime, and a stand-in electron-vite that records how it was called), and the network is a server
// on 127.0.0.1 standing in for Electron's release mirror — or a port where nothing answers.
// Mirror and checksum variables as @electron/get documents them (ELECTRON_MIRROR,
// electron_use_remote_checksums, electron_config_cache).

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { storedZip } from '../support/stored-zip.ts';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const ELECTRON_PACKAGE = join(ROOT, 'node_modules', 'electron');
const VERSION: string = JSON.parse(readFileSync(join(ELECTRON_PACKAGE, 'package.json'), 'utf8')).version;
const ZIP_NAME = `electron-v${VERSION}-${process.platform}-${process.arch}.zip`;
// What a release zip holds for this platform, reduced to what the install script checks: the
// executable path.txt names, and the version file.
const RUNTIME_ZIP = storedZip([
  { name: 'electron', data: Buffer.from('#!/bin/sh\nexit 0\n'), mode: 0o755 },
  { name: 'version', data: Buffer.from(VERSION) },
]);

interface Mirror {
  url: string;
  requests: string[];
  close(): Promise<void>;
}

/** Electron's release mirror as @electron/get asks it: v<version>/<zip> and v<version>/SHASUMS256.txt. */
async function releaseMirror(): Promise<Mirror> {
  const requests: string[] = [];
  const shasums = `${createHash('sha256').update(RUNTIME_ZIP).digest('hex')} *${ZIP_NAME}\n`;
  const server: Server = createServer((request, response) => {
    requests.push(request.url ?? '');
    if (request.url === `/v${VERSION}/${ZIP_NAME}`) response.writeHead(200, { 'content-type': 'application/zip' }).end(RUNTIME_ZIP);
    else if (request.url === `/v${VERSION}/SHASUMS256.txt`) response.writeHead(200).end(shasums);
    else response.writeHead(404).end();
  });
  await new Promise<void>((done) => server.listen(0, '127.0.0.1', done));
  const address = server.address() as { port: number };
  return { url: `http://127.0.0.1:${address.port}/`, requests, close: () => new Promise((done) => server.close(() => done())) };
}

/** A port on 127.0.0.1 where nothing listens: a machine without a network, as the download sees it. */
async function deadPort(): Promise<string> {
  const server = createServer();
  await new Promise<void>((done) => server.listen(0, '127.0.0.1', done));
  const { port } = server.address() as { port: number };
  await new Promise<void>((done) => server.close(() => done()));
  return `http://127.0.0.1:${port}/`;
}

const layouts: string[] = [];
afterAll(() => {
  for (const layout of layouts) rmSync(layout, { recursive: true, force: true });
});

/**
 * A copy of the project's layout for the start script, inside the repository so that the copied
 * electron package finds its own dependencies (@electron/get …) in the project's node_modules.
 */
function projectLayout(): string {
  mkdirSync(join(ROOT, 'out'), { recursive: true });
  const root = mkdtempSync(join(ROOT, 'out', 'start-test-'));
  layouts.push(root);
  mkdirSync(join(root, 'scripts'));
  for (const file of ['start.mjs', 'launch-tools.mjs']) copyFileSync(join(ROOT, 'scripts', file), join(root, 'scripts', file));
  const electron = join(root, 'node_modules', 'electron');
  mkdirSync(electron, { recursive: true });
  for (const file of ['package.json', 'install.js', 'index.js', 'checksums.json']) copyFileSync(join(ELECTRON_PACKAGE, file), join(electron, file));
  const vite = join(root, 'node_modules', 'electron-vite');
  mkdirSync(join(vite, 'bin'), { recursive: true });
  writeFileSync(join(vite, 'package.json'), JSON.stringify({ name: 'electron-vite', version: '0.0.0-stand-in' }));
  writeFileSync(
    join(vite, 'bin', 'electron-vite.js'),
    `require('node:fs').writeFileSync(${JSON.stringify(join(root, 'preview-called.json'))}, JSON.stringify(process.argv.slice(2)));\n`,
  );
  return root;
}

async function start(root: string, mirror: string): Promise<{ status: number | null; stdout: string; stderr: string }> {
  const env: NodeJS.ProcessEnv = {};
  // Only what the script needs, so no setting of this machine (an npm config, a real mirror) leaks in.
  for (const name of ['PATH', 'HOME', 'TMPDIR', 'SYSTEMROOT']) if (process.env[name] !== undefined) env[name] = process.env[name];
  Object.assign(env, {
    ELECTRON_MIRROR: mirror,
    electron_use_remote_checksums: '1',
    electron_config_cache: join(root, 'electron-cache'),
  });
  const child = spawn(process.execPath, [join(root, 'scripts', 'start.mjs')], { cwd: root, env });
  let stdout = '';
  let stderr = '';
  child.stdout.on('data', (chunk) => (stdout += chunk));
  child.stderr.on('data', (chunk) => (stderr += chunk));
  const status = await new Promise<number | null>((done) => child.on('exit', done));
  return { status, stdout, stderr };
}

describe('npm start on a first start', () => {
  let mirror: Mirror;
  beforeAll(async () => {
    mirror = await releaseMirror();
  });
  afterAll(() => mirror.close());

  it('fetches the Electron runtime when it is missing, then opens the app through electron-vite preview', async () => {
    const root = projectLayout();
    const result = await start(root, mirror.url);
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    expect(result.stdout).toMatch(/^Fetching the Electron runtime \(first start only\)/);
    expect(mirror.requests).toContain(`/v${VERSION}/${ZIP_NAME}`);
    const electron = join(root, 'node_modules', 'electron');
    expect(readFileSync(join(electron, 'path.txt'), 'utf8')).toBe(process.platform === 'win32' ? 'electron.exe' : 'electron');
    expect(existsSync(join(electron, 'dist', 'electron'))).toBe(true);
    expect(JSON.parse(readFileSync(join(root, 'preview-called.json'), 'utf8'))).toEqual(['preview']);

    // The next start finds the runtime and asks the network nothing.
    const asked = mirror.requests.length;
    rmSync(join(root, 'preview-called.json'));
    const again = await start(root, mirror.url);
    expect(again.status).toBe(0);
    expect(again.stdout).not.toMatch(/Fetching/);
    expect(mirror.requests.length).toBe(asked);
    expect(existsSync(join(root, 'preview-called.json'))).toBe(true);
  });

  it('without a network: one line saying why and what to do, no stack, and nothing opened', async () => {
    const root = projectLayout();
    const result = await start(root, await deadPort());
    expect(result.status).toBe(1);
    const lines = result.stderr.trim().split('\n');
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/^Trimbench cannot start: the Electron runtime is not installed and could not be downloaded \(no connection to the download server: .+\)\. Run `npm start` again with internet access/);
    expect(result.stderr).not.toMatch(/^\s+at /m);
    expect(existsSync(join(root, 'preview-called.json'))).toBe(false);
  });

  it('a mirror that does not have the release: the same one line', async () => {
    const root = projectLayout();
    // The mirror answers, but 404 for every file under another path.
    const result = await start(root, `${mirror.url}nothing-here/`);
    expect(result.status).toBe(1);
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(/^Trimbench cannot start: .*404/);
    expect(existsSync(join(root, 'preview-called.json'))).toBe(false);
  });
});
