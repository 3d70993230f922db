// The main process as shipped: the built bundle out/main/index.js (as electron-vite emits it) run in
// Node against the Electron stand-in (vitest.config.ts maps `electron` to it for this project). Each
// test starts the bundle afresh, plays Electron's part (ready, a frame calling, a page navigating)
// and reads what the app asked of Electron. The rules checked are those of Electron's security
// checklist (electronjs.org/docs/latest/tutorial/security: context isolation, sandbox, no Node in the
// page, a CSP, no navigation, no new windows, permission requests handled, IPC senders validated,
// a custom protocol instead of file://) and its single-instance lock (app.requestSingleInstanceLock).

import { afterEach, describe, expect, it, vi } from 'vitest';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import type * as Electron from 'electron';
import { IPC_CHANNELS, ipcChannelName } from '../../shared/ipc/channels.ts';
import { CHANNEL_ACTIONS } from '../../electron/services/handlers.ts';
import { SHEET_PDF } from '../../electron/main/sheet-pdf.ts';

const BUNDLE = fileURLToPath(new URL('../../out/main/index.js', import.meta.url));
const RENDERER = fileURLToPath(new URL('../../out/renderer/', import.meta.url));
const PRELOAD = fileURLToPath(new URL('../../out/preload/index.cjs', import.meta.url));
const APP_PAGE = 'trimbench://app/index.html';

type StandIn = typeof import('./electron-stand-in.ts');

const folders: string[] = [];
let started: StandIn | null = null;

function freshFolder(): string {
  const folder = mkdtempSync(join(tmpdir(), 'trimbench-main-'));
  folders.push(folder);
  return folder;
}

/** Loads the built bundle as Electron would at launch, with a fresh stand-in answering `options`. */
async function launch(options: { appData: string; singleInstanceLock?: boolean }): Promise<StandIn> {
  if (!existsSync(BUNDLE)) throw new Error('out/main/index.js is missing: run `npm run build` first (npm test does).');
  vi.resetModules();
  const electron: StandIn = await import('./electron-stand-in.ts');
  electron.control.configure(options);
  await import(/* @vite-ignore */ BUNDLE);
  started = electron;
  return electron;
}

/** Launches with a fresh data folder and lets Electron become ready. */
async function startedApp(): Promise<{ electron: StandIn; userData: string }> {
  const appData = freshFolder();
  const electron = await launch({ appData });
  await electron.control.ready();
  return { electron, userData: join(appData, 'trimbench') };
}

afterEach(() => {
  // Quitting closes the station (its database and the data folder's lock) before the folder goes.
  started?.control.emitApp('will-quit', { preventDefault: () => undefined });
  started = null;
  for (const folder of folders.splice(0)) rmSync(folder, { recursive: true, force: true });
});

/** An IPC call as Electron delivers it: from the page's top frame unless another frame is named. */
function invoke(electron: StandIn, channel: string, payload: unknown, from: { frameUrl?: string; topFrame?: boolean } = {}) {
  const handler = electron.recorded.ipcHandlers.get(channel);
  if (!handler) throw new Error(`no handler for ${channel}`);
  const window = electron.control.windows()[0]!;
  const sender = window.webContents;
  const topFrame = { url: from.topFrame === false ? APP_PAGE : (from.frameUrl ?? APP_PAGE), parent: null };
  const senderFrame = from.topFrame === false ? { url: from.frameUrl ?? APP_PAGE, parent: topFrame } : topFrame;
  (sender as { mainFrame: unknown }).mainFrame = topFrame;
  return handler({ sender, senderFrame } as unknown as Electron.IpcMainInvokeEvent, payload) as Promise<{ ok: boolean; value?: unknown; error?: { name: string; message: string } }>;
}

function serve(electron: StandIn, url: string): Promise<Response> {
  const handler = electron.recorded.protocolHandlers.get('trimbench');
  if (!handler) throw new Error('the trimbench: scheme has no handler');
  return Promise.resolve(handler(new Request(url)));
}

describe('the main process at start', () => {
  it('opens one sandboxed window on the app page, with the preload and no Node in the page', async () => {
    const { electron } = await startedApp();
    const windows = electron.control.windows();
    expect(windows).toHaveLength(1);
    const prefs = windows[0]!.options.webPreferences!;
    // Checklist: context isolation on, the renderer sandboxed, no Node integration, web security kept.
    expect(prefs.contextIsolation).toBe(true);
    expect(prefs.sandbox).toBe(true);
    expect(prefs.nodeIntegration).toBe(false);
    expect(prefs.webSecurity).not.toBe(false);
    expect(prefs.preload).toBe(PRELOAD);
    expect(existsSync(prefs.preload!)).toBe(true);
    // Checklist: the app is loaded from its own privileged scheme, never from file://.
    expect(windows[0]!.loadedUrls).toEqual([APP_PAGE]);
    expect(electron.recorded.privilegedSchemes.map((s) => s.scheme)).toEqual(['trimbench']);
    expect(electron.recorded.errorBoxes).toEqual([]);
    expect(electron.recorded.messageBoxes).toEqual([]);
  });

  it('opens the station in the data folder with the demo procedure ready, as a first start does', async () => {
    const { electron, userData } = await startedApp();
    const station = await invoke(electron, ipcChannelName('describeStation'), {});
    expect(station.ok).toBe(true);
    // The folder keeps the package's name under the system's app-data folder, whatever product name a
    // packager gives the app (the stand-in, like Electron, would otherwise name it "Trimbench").
    expect(userData.endsWith(`${sep}trimbench`)).toBe(true);
    expect((station.value as { databasePath: string; recordsProblem: string | null }).databasePath).toBe(join(userData, 'trimbench.sqlite'));
    expect(existsSync(join(userData, 'trimbench.sqlite'))).toBe(true);
    expect((station.value as { recordsProblem: string | null }).recordsProblem).toBeNull();
    const procedures = await invoke(electron, ipcChannelName('listProcedures'), {});
    const codes = (procedures.value as { definition: { model: { code: string } } }[]).map((p) => p.definition.model.code);
    expect(codes).toContain('MG-20');
  });

  it('a second instance hands over to the first and quits before it opens the station database', async () => {
    const appData = freshFolder();
    const electron = await launch({ appData, singleInstanceLock: false });
    await electron.control.ready();
    expect(electron.recorded.quitCalls).toBe(1);
    // Nothing was set up: no scheme, no handlers, no window, and no file in (or folder for) the data.
    expect(electron.recorded.protocolHandlers.size).toBe(0);
    expect(electron.recorded.ipcHandlers.size).toBe(0);
    expect(electron.control.windows()).toHaveLength(0);
    expect(readdirSync(appData)).toEqual([]);
  });

  it('the first instance comes to the front when a second one is started', async () => {
    const { electron } = await startedApp();
    electron.control.emitApp('second-instance', {}, [], '/');
    expect(electron.control.windows()[0]!.focusCount).toBe(1);
  });
});

describe('IPC', () => {
  it('registers every contract channel once, and each reaches the contract’s dispatcher', async () => {
    const { electron } = await startedApp();
    expect([...electron.recorded.ipcHandlers.keys()].sort()).toEqual(IPC_CHANNELS.map(ipcChannelName).sort());
    for (const channel of IPC_CHANNELS) {
      // A payload no request of the contract accepts: the dispatcher's refusal, in its words, proves the route.
      const result = await invoke(electron, ipcChannelName(channel), 42);
      expect(result.ok, channel).toBe(false);
      expect(result.error?.name, channel).toBe('InvalidRequest');
      // In the dispatcher's words for that channel: each channel reaches its own route.
      expect(result.error?.message.startsWith(`The request to ${CHANNEL_ACTIONS[channel]} was refused: `), result.error?.message).toBe(true);
    }
  });

  it('refuses a call from a frame inside the page, or from a page that is not the app’s, before it is read', async () => {
    const { electron } = await startedApp();
    const read = async () => ((await invoke(electron, ipcChannelName('getStationCalibration'), {})).value as { settings: { stationName: string } }).settings;
    const before = await read();
    // A request main would accept from the app's top frame: only its sender is wrong.
    const takeOver = { ...before, stationName: 'taken over' };
    for (const from of [
      { frameUrl: APP_PAGE, topFrame: false },
      { frameUrl: 'https://example.com/', topFrame: true },
      { frameUrl: 'file:///etc/passwd', topFrame: true },
    ]) {
      const result = await invoke(electron, ipcChannelName('saveStationSettings'), takeOver, from);
      expect(result.ok).toBe(false);
      expect(result.error?.name).toBe('Forbidden');
    }
    expect(await read()).toEqual(before);
    // The same request from the app's top frame is taken.
    expect((await invoke(electron, ipcChannelName('saveStationSettings'), takeOver)).ok).toBe(true);
    expect((await read()).stationName).toBe('taken over');
  });
});

describe('the app’s scheme', () => {
  it('serves the built renderer’s files, the page at the root', async () => {
    const { electron } = await startedApp();
    const page = await serve(electron, APP_PAGE);
    expect(page.status).toBe(200);
    expect(await page.text()).toBe(readFileSync(join(RENDERER, 'index.html'), 'utf8'));
    expect(await (await serve(electron, 'trimbench://app/')).text()).toBe(readFileSync(join(RENDERER, 'index.html'), 'utf8'));
    const asset = readdirSync(join(RENDERER, 'assets')).find((name) => name.endsWith('.js'))!;
    expect((await serve(electron, `trimbench://app/assets/${asset}`)).status).toBe(200);
  });

  it('refuses every path outside the renderer folder, malformed escapes and other hosts, without throwing', async () => {
    const { electron } = await startedApp();
    // Each names a file that exists outside out/renderer (the repository's package.json) or is not a file.
    expect(existsSync(join(RENDERER, '..', '..', 'package.json'))).toBe(true);
    const refused = [
      'trimbench://app/..%2F..%2Fpackage.json',
      'trimbench://app/%2e%2e%2f%2e%2e%2fpackage.json',
      'trimbench://app/assets/..%2F..%2F..%2Fpackage.json',
      'trimbench://app/%2F..%2F..%2Fpackage.json',
      'trimbench://app/%252e%252e/%252e%252e/package.json',
      'trimbench://app/..%5C..%5Cpackage.json',
      'trimbench://app/index.html%00.png',
      'trimbench://app/%',
      'trimbench://app/%E0%A4%A',
      'trimbench://app/%zz',
      'trimbench://app/assets',
      'trimbench://app/no-such-file.js',
      'trimbench://other/index.html',
      'trimbench://app.example.com/index.html',
    ];
    for (const url of refused) {
      const response = await serve(electron, url);
      expect(response.status, url).toBe(404);
      expect(await response.text(), url).toBe('Not found');
    }
  });

  it('refuses a backslash in a path on every platform (on Windows it is a separator a check on "/" would miss)', async () => {
    const { electron } = await startedApp();
    // A file whose name holds a backslash, which Linux allows: served, it would show the rule missing here too.
    const odd = join(RENDERER, 'assets', 'odd\\name.js');
    writeFileSync(odd, '// a name no build makes');
    try {
      const response = await serve(electron, 'trimbench://app/assets/odd%5Cname.js');
      expect(response.status).toBe(404);
    } finally {
      rmSync(odd, { force: true });
    }
  });

  it('sends the Content-Security-Policy on every response, refusals too, with no inline script or style', async () => {
    const { electron } = await startedApp();
    const meta = /http-equiv="Content-Security-Policy"\s+content="([^"]+)"/.exec(readFileSync(join(RENDERER, 'index.html'), 'utf8'))?.[1];
    for (const url of [APP_PAGE, 'trimbench://app/%', 'trimbench://app/..%2Fx', 'trimbench://other/']) {
      const policy = (await serve(electron, url)).headers.get('content-security-policy');
      expect(policy, url).toBe(meta);
    }
    // CSP Level 3 (W3C): only the app's own scripts and styles; no inline code, no eval, no plugins.
    expect(meta).toMatch(/(^|; )script-src 'self'(;|$)/);
    expect(meta).toMatch(/(^|; )style-src 'self'(;|$)/);
    expect(meta).toMatch(/(^|; )object-src 'none'(;|$)/);
    expect(meta).not.toMatch(/unsafe-inline|unsafe-eval/);
  });
});

describe('what the page may do', () => {
  it('refuses navigation away from the app, every new window and every webview', async () => {
    const { electron } = await startedApp();
    const contents = electron.control.windows()[0]!.webContents;
    expect(contents.navigate('https://example.com/')).toBe(false);
    expect(contents.navigate('file:///etc/passwd')).toBe(false);
    expect(contents.navigate('trimbench://other/index.html')).toBe(false);
    expect(contents.navigate(APP_PAGE)).toBe(true);
    const open = contents.windowOpenHandler!;
    for (const url of ['https://example.com/', APP_PAGE]) {
      expect(open({ url, frameName: '', features: '', disposition: 'new-window', referrer: { url: '', policy: 'default' } } as Electron.HandlerDetails)).toEqual({ action: 'deny' });
    }
    expect(contents.attachWebview()).toBe(false);
    // Contents made later (a devtools or print view) are held to the same rules.
    const later = new electron.BrowserWindow({}).webContents;
    expect(later.navigate('https://example.com/')).toBe(false);
  });

  it('grants the microphone for audio only, and only to the app page; nothing else', async () => {
    const { electron } = await startedApp();
    const request = electron.recorded.permissionRequestHandler!;
    const ask = (permission: string, requestingUrl: string, mediaTypes?: string[]) =>
      new Promise<boolean>((resolve) =>
        request({} as Electron.WebContents, permission as 'media', resolve, { requestingUrl, isMainFrame: true, mediaTypes } as unknown as Electron.MediaAccessPermissionRequest),
      );
    expect(await ask('media', APP_PAGE, ['audio'])).toBe(true);
    expect(await ask('media', APP_PAGE, ['video'])).toBe(false);
    expect(await ask('media', APP_PAGE, ['audio', 'video'])).toBe(false);
    expect(await ask('media', APP_PAGE, [])).toBe(false);
    expect(await ask('media', APP_PAGE)).toBe(false);
    expect(await ask('media', 'https://example.com/', ['audio'])).toBe(false);
    for (const permission of ['geolocation', 'notifications', 'clipboard-read', 'openExternal', 'fullscreen', 'hid', 'serial', 'usb']) {
      expect(await ask(permission, APP_PAGE, ['audio']), permission).toBe(false);
    }
    const check = electron.recorded.permissionCheckHandler!;
    expect(check(null, 'media', 'trimbench://app', {} as Electron.PermissionCheckHandlerHandlerDetails)).toBe(true);
    expect(check(null, 'media', 'https://example.com', {} as Electron.PermissionCheckHandlerHandlerDetails)).toBe(false);
    expect(check(null, 'geolocation', 'trimbench://app', {} as Electron.PermissionCheckHandlerHandlerDetails)).toBe(false);
  });
});

describe('a start that cannot go on', () => {
  it('a data folder that cannot be made: one dialog naming it and what to do, then the app quits without a window', async () => {
    const blocker = join(freshFolder(), 'not-a-folder');
    writeFileSync(blocker, 'a file where the data folder’s parent should be');
    const userData = join(blocker, 'trimbench');
    const electron = await launch({ appData: blocker });
    await electron.control.ready();
    expect(electron.recorded.errorBoxes).toHaveLength(1);
    const [box] = electron.recorded.errorBoxes;
    expect(box!.title).toBe('Trimbench cannot start');
    expect(box!.content).toContain(userData);
    expect(box!.content).toMatch(/writable.*start Trimbench again/);
    expect(electron.recorded.quitCalls).toBe(1);
    expect(electron.control.windows()).toHaveLength(0);
    expect(electron.recorded.ipcHandlers.size).toBe(0);
  });

  it('damaged station settings: one dialog naming the file and what to do, then the app quits', async () => {
    const appData = freshFolder();
    const userData = join(appData, 'trimbench');
    mkdirSync(userData);
    const settings = join(userData, 'station-settings.json');
    writeFileSync(settings, '{"format": "trimbench-station-settings", "version": 1, "settings": {');
    const electron = await launch({ appData });
    await electron.control.ready();
    expect(electron.recorded.errorBoxes).toHaveLength(1);
    expect(electron.recorded.errorBoxes[0]!.content).toContain(settings);
    expect(electron.recorded.errorBoxes[0]!.content).toMatch(/Restore it from the backups folder/);
    expect(electron.recorded.quitCalls).toBe(1);
    expect(electron.control.windows()).toHaveLength(0);
    // The damaged file is left as it was, for whoever restores it.
    expect(readFileSync(settings, 'utf8')).toBe('{"format": "trimbench-station-settings", "version": 1, "settings": {');
  });

  async function withDamagedDatabase(): Promise<{ appData: string; database: string }> {
    const appData = freshFolder();
    mkdirSync(join(appData, 'trimbench'));
    const database = join(appData, 'trimbench', 'trimbench.sqlite');
    // Not an SQLite file (its header is the 16 bytes "SQLite format 3\0": sqlite.org/fileformat.html).
    writeFileSync(database, Buffer.alloc(8192, 0x5a));
    return { appData, database };
  }

  it('a damaged database: one dialog naming the file and what to do; Quit, its default, quits without a window', async () => {
    const { appData, database } = await withDamagedDatabase();
    const electron = await launch({ appData });
    await electron.control.ready();
    expect(electron.recorded.messageBoxes).toHaveLength(1);
    const [box] = electron.recorded.messageBoxes;
    expect(box!.detail).toContain(database);
    expect(box!.detail).toMatch(/backup/i);
    expect(box!.buttons![box!.defaultId!]).toBe('Quit');
    expect(box!.buttons![box!.cancelId!]).toBe('Quit');
    expect(electron.recorded.quitCalls).toBe(1);
    expect(electron.control.windows()).toHaveLength(0);
    expect(electron.recorded.ipcHandlers.size).toBe(0);
    expect(readFileSync(database)).toEqual(Buffer.alloc(8192, 0x5a));
  });

  it('a damaged database opened to read: the window names the file, and nothing can be recorded', async () => {
    const { appData, database } = await withDamagedDatabase();
    const electron = await launch({ appData });
    electron.control.nextMessageBoxButton = 1; // "Open to read only"
    await electron.control.ready();
    expect(electron.recorded.messageBoxes[0]!.buttons![1]).toBe('Open to read only');
    expect(electron.control.windows()).toHaveLength(1);
    const station = await invoke(electron, ipcChannelName('describeStation'), {});
    expect((station.value as { recordsProblem: string | null }).recordsProblem).toContain(database);
    // A write the page can ask for: importing the demo procedure file through main's dialog.
    electron.control.nextChosenFile = fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url));
    const opened = await invoke(electron, ipcChannelName('importProcedure'), {});
    expect(opened.ok).toBe(false);
    expect(opened.error?.message).toContain(database);
    expect(readFileSync(database)).toEqual(Buffer.alloc(8192, 0x5a));
  });

  it('a database that cannot be opened at all (its name taken by a folder): the same dialog, naming it', async () => {
    const appData = freshFolder();
    const database = join(appData, 'trimbench', 'trimbench.sqlite');
    mkdirSync(database, { recursive: true });
    const electron = await launch({ appData });
    await electron.control.ready();
    expect(electron.recorded.messageBoxes).toHaveLength(1);
    expect(electron.recorded.messageBoxes[0]!.detail).toContain(database);
    expect(electron.recorded.quitCalls).toBe(1);
    expect(electron.control.windows()).toHaveLength(0);
  });
});

describe('a window that stops', () => {
  it('a page that crashes: one box naming the log and a reference; Reload reloads, Quit quits', async () => {
    const { electron, userData } = await startedApp();
    const window = electron.control.windows()[0]!;
    window.webContents.emit('render-process-gone', { reason: 'crashed', exitCode: 139 });
    expect(electron.recorded.messageBoxes).toHaveLength(1);
    const detail = electron.recorded.messageBoxes[0]!.detail!;
    const log = join(userData, 'trimbench-errors.log');
    expect(detail).toContain(log);
    const reference = /reference (E-[0-9A-Z]{6})/.exec(detail)?.[1];
    expect(reference).toBeDefined();
    expect(readFileSync(log, 'utf8')).toContain(reference!);
    expect(window.reloadCount).toBe(1);
    electron.control.nextMessageBoxButton = 1;
    window.webContents.emit('render-process-gone', { reason: 'oom', exitCode: 0 });
    expect(electron.recorded.quitCalls).toBe(1);
    // A page closed on purpose is not a failure.
    window.webContents.emit('render-process-gone', { reason: 'clean-exit', exitCode: 0 });
    expect(electron.recorded.messageBoxes).toHaveLength(2);
  });

  it('a page that does not load: one dialog naming the log, then the app quits; an aborted navigation is no failure', async () => {
    const { electron, userData } = await startedApp();
    const contents = electron.control.windows()[0]!.webContents;
    contents.emit('did-fail-load', -3, 'ERR_ABORTED', 'https://example.com/', true);
    contents.emit('did-fail-load', -6, 'ERR_FILE_NOT_FOUND', 'trimbench://app/frame.html', false);
    expect(electron.recorded.errorBoxes).toEqual([]);
    contents.emit('did-fail-load', -6, 'ERR_FILE_NOT_FOUND', APP_PAGE, true);
    expect(electron.recorded.errorBoxes).toHaveLength(1);
    expect(electron.recorded.errorBoxes[0]!.content).toContain(join(userData, 'trimbench-errors.log'));
    expect(electron.recorded.quitCalls).toBe(1);
  });
});

describe('what main does for the page with Electron', () => {
  it('imports a procedure through its own file dialog, shown over the app’s window', async () => {
    const { electron } = await startedApp();
    const procedureFile = fileURLToPath(new URL('../../resources/procedures/mg20-lf-trim.json', import.meta.url));
    // Cancelled: nothing imported.
    expect(await invoke(electron, ipcChannelName('importProcedure'), {})).toMatchObject({ ok: true, value: { outcome: 'cancelled' } });
    electron.control.nextChosenFile = procedureFile;
    const imported = await invoke(electron, ipcChannelName('importProcedure'), {});
    expect(imported, JSON.stringify(imported.error)).toMatchObject({ ok: true, value: { outcome: 'stored' } });
    expect(electron.recorded.openDialogs).toHaveLength(2);
    const [dialog] = electron.recorded.openDialogs;
    expect(dialog!.window).toBe(electron.control.windows()[0]);
    expect(dialog!.options.properties).toEqual(['openFile']);
    expect(dialog!.options.filters).toEqual([{ name: 'Procedure (JSON)', extensions: ['json'] }]);
    const revisions = (await invoke(electron, ipcChannelName('listProcedureRevisions'), {})).value as { revision: string; current: boolean }[];
    expect(revisions.filter((r) => r.current).map((r) => r.revision)).toEqual(['E']);
  });

  it('saves the unit sheet through printToPDF on A4 with the margins in inches, and prints through the system dialog', async () => {
    const { electron, userData } = await startedApp();
    const [procedure] = (await invoke(electron, ipcChannelName('listProcedures'), {})).value as { id: number }[];
    const opened = await invoke(electron, ipcChannelName('openRun'), { serial: 'MG20-2611-0042', procedureId: procedure!.id, operator: 'A. Tester' });
    expect(opened.ok, JSON.stringify(opened.error)).toBe(true);
    const runId = (opened.value as { run: { id: number } }).run.id;
    const finished = await invoke(electron, ipcChannelName('finishRun'), { runId, asFailure: true });
    expect(finished.ok, JSON.stringify(finished.error)).toBe(true);

    const saved = await invoke(electron, ipcChannelName('saveSheetPdf'), { runId });
    expect(saved.ok, JSON.stringify(saved.error)).toBe(true);
    const contents = electron.control.windows()[0]!.webContents;
    expect(contents.printToPdfCalls).toHaveLength(1);
    const pdf = contents.printToPdfCalls[0]!;
    expect(pdf.pageSize).toBe('A4');
    expect(pdf.printBackground).toBe(true);
    expect(pdf.displayHeaderFooter).toBe(true);
    // printToPDF takes inches (Electron's API docs); 1 inch is 25.4 mm exactly (international yard and
    // pound, 1959): each margin is the sheet's millimetres converted. At least 10 mm each side keeps
    // the sheet clear of an office printer's unprintable edge (common practice; 4–6 mm is usual).
    const margins = pdf.margins as { top: number; bottom: number; left: number; right: number };
    for (const side of ['top', 'bottom', 'left', 'right'] as const) {
      expect(margins[side] * 25.4, side).toBeCloseTo(SHEET_PDF.marginsMm[side], 9);
      expect(margins[side] * 25.4, side).toBeGreaterThanOrEqual(10);
    }
    const path = (saved.value as { path: string }).path;
    expect(path.startsWith(join(userData, 'sheets'))).toBe(true);
    expect(readFileSync(path, 'latin1').startsWith('%PDF-')).toBe(true);

    const printed = await invoke(electron, ipcChannelName('printSheet'), { runId });
    expect(printed).toEqual({ ok: true, value: { printed: false } });
    expect(contents.printCalls).toEqual([{ silent: false, printBackground: true }]);
  });
});
