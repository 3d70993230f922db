// The Electron main process: one sandboxed window serving the built renderer from a private
// scheme, the IPC handlers registered generically from the contract, and nothing more.

import { app, BrowserWindow, dialog, ipcMain, net, protocol, session, type IpcMainInvokeEvent, type WebContents } from 'electron';
import { hostname } from 'node:os';
import { join, normalize, sep } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { IPC_CHANNELS, ipcChannelName } from '../../shared/ipc/channels.ts';
import { openErrorLog, type ErrorLog } from '../services/error-log.ts';
import { ExpectedFailure } from '../services/expected-failure.ts';
import { dispatch, type CallerContext } from '../services/handlers.ts';
import { openStation } from '../services/station.ts';
import { securityPolicy } from './security-policy.ts';
import { MM_PER_INCH, SHEET_PDF } from './sheet-pdf.ts';

const APP_SCHEME = 'trimbench';
const APP_ORIGIN = `${APP_SCHEME}://app`;
const here = fileURLToPath(new URL('.', import.meta.url));
const rendererDir = join(here, '../renderer');
// Set by `electron-vite dev` to its dev server; absent in a built app.
const devServerUrl = process.env['ELECTRON_RENDERER_URL'];
const policy = securityPolicy(devServerUrl ? new URL(devServerUrl).origin : APP_ORIGIN);

protocol.registerSchemesAsPrivileged([
  { scheme: APP_SCHEME, privileges: { standard: true, secure: true, supportFetchAPI: true } },
]);

// The same policy as the page's meta tag, sent as a header too so it also covers the worker and worklets.
const CONTENT_SECURITY_POLICY =
  "default-src 'self'; script-src 'self'; style-src 'self' 'unsafe-inline'; img-src 'self' data:; font-src 'self'; " +
  "connect-src 'self'; worker-src 'self'; media-src 'self' mediastream:; object-src 'none'; base-uri 'none'; form-action 'none'";

function serveRenderer(): void {
  protocol.handle(APP_SCHEME, async (request) => {
    const url = new URL(request.url);
    const file = normalize(join(rendererDir, decodeURIComponent(url.pathname === '/' ? '/index.html' : url.pathname)));
    if (url.host !== 'app' || !file.startsWith(rendererDir + sep)) return new Response('Not found', { status: 404 });
    const response = await net.fetch(pathToFileURL(file).toString());
    const headers = new Headers(response.headers);
    headers.set('Content-Security-Policy', CONTENT_SECURITY_POLICY);
    return new Response(response.body, { status: response.status, headers });
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
      if (!policy.allowIpcSender(event.senderFrame?.url, event.senderFrame === event.sender.mainFrame)) {
        return { ok: false, error: { name: 'Forbidden', message: 'Request from outside the Trimbench page refused.' } };
      }
      return dispatch(handlers, channel, payload, callerContext(event.sender), errorLog);
    });
  }
}

function createWindow(): BrowserWindow {
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
  void window.loadURL(devServerUrl ?? `${APP_ORIGIN}/index.html`);
  return window;
}

// One Trimbench per station: a second one would write the same database.
if (!app.requestSingleInstanceLock()) app.quit();
app.on('second-instance', () => {
  const window = BrowserWindow.getAllWindows()[0];
  if (window?.isMinimized()) window.restore();
  window?.focus();
});

// The error log lives in the data folder; opened here too for a start that fails before the station is open.
const dataDir = app.getPath('userData');
const startupLog = openErrorLog(dataDir);

app
  .whenReady()
  .then(() => {
    const station = openStation({ dataDir, stationName: hostname() });
    app.on('will-quit', () => station.close());
    serveRenderer();
    lockDownSessions();
    registerIpc(station.handlers, station.errorLog);
    createWindow();
    app.on('activate', () => {
      if (BrowserWindow.getAllWindows().length === 0) createWindow();
    });
  })
  .catch((error: unknown) => {
    // Nothing runs without the records (a newer or locked database, a failed migration): say why and
    // stop. An expected failure already tells the technician what to do; anything else is a bug whose
    // raw text goes to the log.
    const message =
      error instanceof ExpectedFailure
        ? error.message
        : `Trimbench met an unexpected problem while starting and has stopped. Start it again; if it stops again, report it. Details are in ${startupLog.path} (reference ${startupLog.record('startup failed', error)}).`;
    dialog.showErrorBox('Trimbench cannot start', message);
    app.quit();
  });

app.on('window-all-closed', () => {
  if (process.platform !== 'darwin') app.quit();
});
