// The Electron main process: one sandboxed window serving the built renderer from a private
// scheme, the IPC handlers registered generically from the contract, and nothing more.

import { app, BrowserWindow, dialog, ipcMain, net, protocol, session, type IpcMainInvokeEvent, type WebContents } from 'electron';
import { hostname } from 'node:os';
import { statSync } from 'node:fs';
import { join, normalize, sep } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { IPC_CHANNELS, ipcChannelName } from '../../shared/ipc/channels.ts';
import { openErrorLog, type ErrorLog } from '../services/error-log.ts';
import { ExpectedFailure } from '../services/expected-failure.ts';
import { dispatch, type CallerContext } from '../services/handlers.ts';
import { openStation } from '../services/station.ts';
import { CONTENT_SECURITY_POLICY } from './content-security-policy.ts';
import { securityPolicy } from './security-policy.ts';
import { MM_PER_INCH, SHEET_PDF } from './sheet-pdf.ts';

const APP_SCHEME = 'trimbench';
const APP_ORIGIN = `${APP_SCHEME}://app`;
const DATA_FOLDER_NAME = 'trimbench';
const here = fileURLToPath(new URL('.', import.meta.url));
const rendererDir = join(here, '../renderer');
// Set by `electron-vite dev` to its dev server; absent in a built app.
const devServerUrl = process.env['ELECTRON_RENDERER_URL'];
const policy = securityPolicy(devServerUrl ? new URL(devServerUrl).origin : APP_ORIGIN);

/** Every response of the app's scheme, a refusal too, carries the policy. */
function withPolicy(response: Response): Response {
  const headers = new Headers(response.headers);
  headers.set('Content-Security-Policy', CONTENT_SECURITY_POLICY);
  return new Response(response.body, { status: response.status, headers });
}

const notFound = () => withPolicy(new Response('Not found', { status: 404 }));

/**
 * The renderer file a request names, or null: another host, escapes that do not decode, a path that
 * leaves the renderer folder once decoded (an encoded slash or dot-dot), or anything but a regular file.
 */
function rendererFileFor(requestUrl: string): string | null {
  let url: URL;
  let pathname: string;
  try {
    url = new URL(requestUrl);
    pathname = decodeURIComponent(url.pathname);
  } catch {
    return null;
  }
  // No file of the build has a backslash or NUL in its name; on Windows a backslash would be a separator.
  if (url.host !== 'app' || pathname.includes('\0') || pathname.includes('\\')) return null;
  const file = normalize(join(rendererDir, pathname === '/' ? 'index.html' : pathname));
  if (!file.startsWith(rendererDir + sep)) return null;
  try {
    return statSync(file).isFile() ? file : null;
  } catch {
    return null;
  }
}

function serveRenderer(): void {
  protocol.handle(APP_SCHEME, async (request) => {
    const file = rendererFileFor(request.url);
    if (file === null) return notFound();
    try {
      return withPolicy(await net.fetch(pathToFileURL(file).toString()));
    } catch {
      return notFound();
    }
  });
}

function lockDownSessions(): void {
  const appSession = session.defaultSession;
  appSession.setPermissionRequestHandler((_contents, permission, callback, details) =>
    callback(policy.allowPermissionRequest(permission, details.requestingUrl, (details as { mediaTypes?: string[] }).mediaTypes)),
  );
  appSession.setPermissionCheckHandler((_contents, permission, origin) => policy.allowPermissionCheck(permission, origin));
  app.on('web-contents-created', (_event, contents) => {
    contents.on('will-navigate', (event, url) => {
      if (!policy.allowNavigation(url)) event.preventDefault();
    });
    contents.setWindowOpenHandler(() => ({ action: 'deny' }));
    contents.on('will-attach-webview', (event) => event.preventDefault());
  });
}

function callerContext(sender: WebContents): CallerContext {
  return {
    printToPdf: async () =>
      sender.printToPDF({
        pageSize: 'A4',
        printBackground: true,
        displayHeaderFooter: SHEET_PDF.displayHeaderFooter,
        headerTemplate: SHEET_PDF.headerTemplate,
        footerTemplate: SHEET_PDF.footerTemplate,
        // printToPDF takes margins in inches.
        margins: {
          top: SHEET_PDF.marginsMm.top / MM_PER_INCH,
          bottom: SHEET_PDF.marginsMm.bottom / MM_PER_INCH,
          left: SHEET_PDF.marginsMm.left / MM_PER_INCH,
          right: SHEET_PDF.marginsMm.right / MM_PER_INCH,
        },
      }),
    print: () => new Promise((resolve) => sender.print({ silent: false, printBackground: true }, (success) => resolve(success))),
    // The file is chosen in main's own dialog: the page never names a path main would read.
    chooseProcedureFile: async () => {
      const window = BrowserWindow.fromWebContents(sender);
      const options = { title: 'Import a procedure', filters: [{ name: 'Procedure (JSON)', extensions: ['json'] }], properties: ['openFile' as const] };
      const chosen = window ? await dialog.showOpenDialog(window, options) : await dialog.showOpenDialog(options);
      return chosen.canceled || chosen.filePaths.length === 0 ? null : chosen.filePaths[0];
    },
    chooseScopeCapture: async () => {
      const window = BrowserWindow.fromWebContents(sender);
      const options = { title: 'Attach a scope capture', filters: [{ name: 'Oscilloscope record (CSV)', extensions: ['csv', 'txt'] }], properties: ['openFile' as const] };
      const chosen = window ? await dialog.showOpenDialog(window, options) : await dialog.showOpenDialog(options);
      return chosen.canceled || chosen.filePaths.length === 0 ? null : chosen.filePaths[0];
    },
  };
}

function registerIpc(handlers: ReturnType<typeof openStation>['handlers'], errorLog: ErrorLog): void {
  for (const channel of IPC_CHANNELS) {
    ipcMain.handle(ipcChannelName(channel), (event: IpcMainInvokeEvent, payload: unknown) => {
      // Only our own page's top frame may call; an injected frame or foreign page may not.
      // The top frame is the one without a parent (WebFrameMain.parent), whichever object Electron hands over.
      const frame = event.senderFrame;
      if (!frame || !policy.allowIpcSender(frame.url, frame.parent === null)) {
        return { ok: false, error: { name: 'Forbidden', message: 'Request from outside the Trimbench page refused.' } };
      }
      return dispatch(handlers, channel, payload, callerContext(event.sender), errorLog);
    });
  }
}

/** The window's page stopped or never loaded: say so with the log's reference, never leave a blank window. */
function watchWindow(window: BrowserWindow, errorLog: ErrorLog): void {
  window.webContents.on('render-process-gone', (_event, details) => {
    if (details.reason === 'clean-exit') return;
    const reference = errorLog.record('the window stopped', new Error(`renderer process gone: ${details.reason} (exit code ${details.exitCode})`));
    const choice = dialog.showMessageBoxSync(window, {
      type: 'error',
      title: 'Trimbench window stopped',
      message: 'The Trimbench window stopped working.',
      detail: `Everything confirmed before it stopped is saved. Reload to go on, or quit and start Trimbench again; if it happens again, report it with ${errorLog.path} (reference ${reference}).`,
      buttons: ['Reload', 'Quit'],
      defaultId: 0,
      cancelId: 1,
      noLink: true,
    });
    if (choice === 0) window.reload();
    else app.quit();
  });
  window.webContents.on('did-fail-load', (_event, errorCode, errorDescription, validatedUrl, isMainFrame) => {
    // ERR_ABORTED (-3) is a navigation the app itself refused or replaced, not a failure to load.
    if (!isMainFrame || errorCode === -3) return;
    const reference = errorLog.record('loading the window', new Error(`${errorDescription} (${errorCode}) loading ${validatedUrl}`));
    dialog.showErrorBox(
      'Trimbench cannot start',
      `The Trimbench window could not be loaded (${errorDescription}). Install Trimbench again; if it happens again, report it with ${errorLog.path} (reference ${reference}).`,
    );
    app.quit();
  });
}

function createWindow(errorLog: ErrorLog): BrowserWindow {
  const window = new BrowserWindow({
    width: 1400,
    height: 900,
    title: 'Trimbench',
    backgroundColor: '#f4f4f1',
    webPreferences: {
      preload: join(here, '../preload/index.cjs'),
      contextIsolation: true,
      sandbox: true,
      nodeIntegration: false,
      webSecurity: true,
      spellcheck: false,
    },
  });
  watchWindow(window, errorLog);
  void window.loadURL(devServerUrl ?? `${APP_ORIGIN}/index.html`);
  return window;
}

function start(): void {
  protocol.registerSchemesAsPrivileged([
    { scheme: APP_SCHEME, privileges: { standard: true, secure: true, supportFetchAPI: true } },
  ]);
  app.on('second-instance', () => {
    const window = BrowserWindow.getAllWindows()[0];
    if (window?.isMinimized()) window.restore();
    window?.focus();
  });
  app.on('window-all-closed', () => {
    if (process.platform !== 'darwin') app.quit();
  });

  // The data folder is named after the package, as Electron names it for `npm start`: a product
  // name a packager sets must not move a station's records to another folder.
  app.setPath('userData', join(app.getPath('appData'), DATA_FOLDER_NAME));
  // The error log lives in the data folder; opened here too for a start that fails before the station is open.
  const dataDir = app.getPath('userData');
  const startupLog = openErrorLog(dataDir);

  app
    .whenReady()
    .then(() => {
      const station = openStation({ dataDir, stationName: hostname() });
      app.on('will-quit', () => station.close());
      // Records that cannot be written (a damaged database, a read-only folder or disk): said before
      // anything else, with the file and what to do. Quitting is the default; opening to read what is
      // recorded stays possible, and the window then says the same at its top.
      const problem = station.recordsProblem();
      if (problem !== null) {
        const choice = dialog.showMessageBoxSync({
          type: 'error',
          title: 'Trimbench cannot record',
          message: 'Nothing can be recorded at this station.',
          detail: problem,
          buttons: ['Quit', 'Open to read only'],
          defaultId: 0,
          cancelId: 0,
          noLink: true,
        });
        if (choice !== 1) {
          app.quit();
          return;
        }
      }
      serveRenderer();
      lockDownSessions();
      registerIpc(station.handlers, station.errorLog);
      createWindow(station.errorLog);
      app.on('activate', () => {
        if (BrowserWindow.getAllWindows().length === 0) createWindow(station.errorLog);
      });
    })
    .catch((error: unknown) => {
      // Nothing runs without the records (a data folder that cannot be made, a newer or locked
      // database, damaged station settings): say why and stop. An expected failure already tells the
      // technician what to do; anything else is a bug whose raw text goes to the log.
      const message =
        error instanceof ExpectedFailure
          ? error.message
          : `Trimbench met an unexpected problem while starting and has stopped. Start it again; if it stops again, report it. Details are in ${startupLog.path} (reference ${startupLog.record('startup failed', error)}).`;
      dialog.showErrorBox('Trimbench cannot start', message);
      app.quit();
    });
}

// One Trimbench per station: a second one would write the same database. It hands over to the first
// (which comes to the front) and quits before it registers or opens anything.
if (app.requestSingleInstanceLock()) start();
else app.quit();
