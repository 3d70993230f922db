// The browser bench: the built renderer served on 127.0.0.1, Debian's Chromium driven by
// playwright-core with a WAV file as its microphone, and the real main-process handlers bridged
// in from Node over a temporary database. This is how the live path is tested where the
// Electron binary cannot be had; in Electron the preload puts the same API on window.

import { createServer, type Server } from 'node:http';
import { readFile } from 'node:fs/promises';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { extname, join, normalize, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { IPC_CHANNELS } from '../../shared/ipc/channels.ts';
import { dispatch, type CallerContext } from '../../electron/services/handlers.ts';
import { openStation } from '../../electron/services/station.ts';
import { SHEET_PDF } from '../../electron/main/sheet-pdf.ts';
import { CONTENT_SECURITY_POLICY } from '../../electron/main/content-security-policy.ts';

export const RENDERER_DIR = fileURLToPath(new URL('../../out/renderer/', import.meta.url));
/** How long a browser test waits for the page to show something: generous, as Chromium shares the machine. */
export const POLL = { timeout: 15_000 } as const;
export const CHROMIUM_PATH = process.env['TRIMBENCH_CHROMIUM'] ?? '/usr/bin/chromium';

const MIME: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.woff2': 'font/woff2',
};

/**
 * Serves a folder on 127.0.0.1 (never localhost: nothing may resolve past this machine), with the
 * app's Content-Security-Policy header on every response, as main's scheme sends it.
 */
export async function serveFolder(root: string): Promise<{ origin: string; close(): Promise<void> }> {
  const base = resolve(root);
  const server: Server = createServer(async (request, response) => {
    const pathname = decodeURIComponent(new URL(request.url ?? '/', 'http://127.0.0.1').pathname);
    const file = normalize(join(base, pathname === '/' ? 'index.html' : pathname));
    if (!file.startsWith(base + sep)) {
      response.writeHead(404, { 'content-security-policy': CONTENT_SECURITY_POLICY }).end();
      return;
    }
    try {
      const body = await readFile(file);
      response.writeHead(200, {
        'content-type': MIME[extname(file)] ?? 'application/octet-stream',
        'cache-control': 'no-store',
        'content-security-policy': CONTENT_SECURITY_POLICY,
      });
      response.end(body);
    } catch {
      response.writeHead(404, { 'content-security-policy': CONTENT_SECURITY_POLICY }).end();
    }
  });
  await new Promise<void>((done) => server.listen(0, '127.0.0.1', done));
  const address = server.address();
  if (!address || typeof address === 'string') throw new Error('test server has no port');
  return {
    origin: `http://127.0.0.1:${address.port}`,
    close: () => new Promise((done) => server.close(() => done())),
  };
}

export interface BenchOptions {
  /** Absolute path of a 32-bit float WAV to use as the microphone; null for a machine with no input device. */
  captureWav: string | null;
  /** Data folder for the database and sheets; a fresh temporary one when absent. */
  dataDir?: string;
  /** Answer to the page's request for the microphone (default: granted). */
  microphone?: 'granted' | 'denied';
}

export interface Bench {
  page: Page;
  /** What main's file dialog answers when the page imports a procedure (null: cancelled). */
  procedureFileChoice: { path: string | null };
  /** What main's file dialog answers when the page attaches a scope capture (null: cancelled). */
  scopeFileChoice: { path: string | null };
  context: BrowserContext;
  station: ReturnType<typeof openStation>;
  origin: string;
  dataDir: string;
  /** Loads (or reloads) the app page; `beforeLoad` may add page scripts first. */
  openApp(beforeLoad?: (page: Page) => Promise<unknown>): Promise<Page>;
  close(): Promise<void>;
}

function chromiumArgs(captureWav: string | null, microphone: 'granted' | 'denied'): string[] {
  const args = [
    '--no-sandbox',
    '--disable-gpu',
    '--disable-background-networking',
    '--disable-component-update',
    '--disable-sync',
    '--no-first-run',
    '--disable-quic',
    '--autoplay-policy=no-user-gesture-required',
    microphone === 'granted' ? '--use-fake-ui-for-media-stream' : '--deny-permission-prompts',
    // Nothing may be looked up or reached past this machine.
    '--host-resolver-rules=MAP * ~NOTFOUND, EXCLUDE 127.0.0.1',
  ];
  if (captureWav) args.push('--use-fake-device-for-media-stream', `--use-file-for-fake-audio-capture=${captureWav}`);
  return args;
}

export async function openBench({ captureWav, dataDir, microphone = 'granted' }: BenchOptions): Promise<Bench> {
  const ownDataDir = !dataDir;
  const data = dataDir ?? mkdtempSync(join(tmpdir(), 'trimbench-bench-'));
  const profile = mkdtempSync(join(tmpdir(), 'trimbench-chromium-'));
  const station = openStation({ dataDir: data, stationName: 'browser-bench' });
  const server = await serveFolder(RENDERER_DIR);
  let context: BrowserContext;
  try {
    context = await chromium.launchPersistentContext(profile, {
      executablePath: CHROMIUM_PATH,
      headless: true,
      args: chromiumArgs(captureWav, microphone),
      viewport: { width: 1400, height: 900 },
    });
  } catch (error) {
    await server.close();
    station.close();
    throw error;
  }
  let page = context.pages()[0] ?? (await context.newPage());
  const procedureFileChoice: { path: string | null } = { path: null };
  const scopeFileChoice: { path: string | null } = { path: null };

  const caller: CallerContext = {
    // The same sheet view that Electron's printToPDF renders, through Chromium's own PDF path.
    printToPdf: async () =>
      page.pdf({
        format: 'A4',
        printBackground: true,
        displayHeaderFooter: SHEET_PDF.displayHeaderFooter,
        headerTemplate: SHEET_PDF.headerTemplate,
        footerTemplate: SHEET_PDF.footerTemplate,
        margin: Object.fromEntries(Object.entries(SHEET_PDF.marginsMm).map(([side, mm]) => [side, `${mm}mm`])),
      }),
    print: async () => false, // no printer here: reported to the page as cancelled
    // Stands in for main's file dialog: a test sets the file the technician "chooses" (null: cancel).
    chooseProcedureFile: async () => procedureFileChoice.path,
    chooseScopeCapture: async () => scopeFileChoice.path,
  };
  // The station's error log in the data folder, as in the app, so browser tests see the technician's messages.
  const errorLog = station.errorLog;
  await context.exposeBinding('__trimbenchCall', (_source, channel: string, payload: unknown) =>
    dispatch(station.handlers, channel, payload, caller, errorLog),
  );
  // Anything the policy blocks (an inline style, a script, a worker from elsewhere) fails the file at
  // close: a blocked style or script is a broken screen in the app, whose main sends the same policy.
  const cspViolations: string[] = [];
  await context.exposeBinding('__trimbenchCspViolation', (_source, text: string) => void cspViolations.push(text));
  await context.addInitScript(() => {
    document.addEventListener('securitypolicyviolation', (event) => {
      const report = (window as unknown as { __trimbenchCspViolation: (text: string) => void }).__trimbenchCspViolation;
      report(`${event.effectiveDirective} blocked ${event.blockedURI || 'inline'} at ${event.sourceFile}:${event.lineNumber}`);
    });
  });
  context.on('console', (message) => {
    if (/Content Security Policy/i.test(message.text())) cspViolations.push(message.text());
  });
  await context.addInitScript((channels: readonly string[]) => {
    const call = (window as unknown as { __trimbenchCall: (c: string, p: unknown) => Promise<unknown> }).__trimbenchCall;
    (window as unknown as { trimbench: unknown }).trimbench = Object.fromEntries(
      channels.map((channel) => [channel, (request: unknown) => call(channel, request)]),
    );
  }, IPC_CHANNELS);

  const bench: Bench = {
    get page() {
      return page;
    },
    context,
    station,
    procedureFileChoice,
    scopeFileChoice,
    origin: server.origin,
    dataDir: data,
    async openApp(beforeLoad) {
      if (page.isClosed()) page = await context.newPage();
      await beforeLoad?.(page);
      await page.goto(`${server.origin}/index.html`);
      return page;
    },
    async close() {
      await context.close().catch(() => undefined);
      await server.close();
      station.close();
      rmSync(profile, { recursive: true, force: true });
      if (ownDataDir) rmSync(data, { recursive: true, force: true });
      if (cspViolations.length > 0) throw new Error(`The page broke the Content-Security-Policy: ${[...new Set(cspViolations)].join('; ')}`);
    },
  };
  return bench;
}

/**
 * A unit just opened walks its procedure from its safety notice: Enter acknowledges it (its button
 * holds the focus), and the trim step comes up with the position field focused.
 */
export async function acknowledgeNotice(page: Page): Promise<void> {
  const notice = page.getByTestId('acknowledge');
  const trim = page.getByTestId('position-input');
  await notice.or(trim).first().waitFor({ timeout: POLL.timeout });
  // A run whose notice was acknowledged before (resumed, or set up through main) opens at its trim.
  if (await notice.isVisible()) await page.keyboard.press('Enter');
  await trim.waitFor({ timeout: POLL.timeout });
}

/** The demo bench's audio setup, as the page chooses it with no interface. */
export const DEMO_SETUP = { inputDeviceId: 'demo-bench', inputDeviceLabel: 'Demo bench', inputChannel: 0, outputDeviceId: '', outputDeviceLabel: 'Default output', sampleRateHz: 48000 };

/**
 * Calibrates the bench's station for the demo setup through main's dispatcher: a voltmeter reading
 * 0.7746 V (0 dBu) while the generator plays −20 dBFS, and the loopback of that tone captured at
 * `capturedDbfs`.
 */
export async function calibrateDemoBench(bench: Bench, capturedDbfs: number): Promise<void> {
  const noCaller: CallerContext = { printToPdf: async () => new Uint8Array(), print: async () => false, chooseProcedureFile: async () => null };
  const calibrated = await dispatch(
    bench.station.handlers,
    'recordCalibration',
    { operator: 'C. Calibrator', setup: DEMO_SETUP, output: { referenceHz: 1000, referenceDbfs: -20, meterEntry: '0.7746 V' }, input: { method: 'loopback', generatorDbfs: -20, capturedDbfs, capturedHz: 1000 } },
    noCaller,
  );
  if (!calibrated.ok) throw new Error(calibrated.error.message);
}
