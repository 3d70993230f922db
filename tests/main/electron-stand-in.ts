// A stand-in for the `electron` module, for running the built main bundle (out/main/index.js) in
// Node where the Electron binary cannot be had. It does what the app asks and records it, so a test
// can read which handlers were registered, call them as Electron would, and see the dialogs shown.
//
// Each export is typed from Electron's own definitions (Pick<Electron.App, …> and so on): a name the
// stand-in offers that Electron does not have fails to compile, and an API the app calls that the
// stand-in lacks fails the test that reaches it. Test files import it again after vi.resetModules(),
// so every start of the bundle gets a fresh Electron.

import type * as Electron from 'electron';
import { readFile } from 'node:fs/promises';
import { fileURLToPath } from 'node:url';

// Electron's listener signatures differ per event; the stand-in stores them untyped and the tests
// call them with the arguments Electron documents for each event.
type Listener = (...args: any[]) => unknown;

class Events {
  private readonly listeners = new Map<string, Listener[]>();
  add(event: string, listener: Listener): void {
    this.listeners.set(event, [...(this.listeners.get(event) ?? []), listener]);
  }
  emit(event: string, ...args: unknown[]): void {
    for (const listener of this.listeners.get(event) ?? []) listener(...args);
  }
}

export interface StandInOptions {
  /** What app.getPath('appData') answers; userData is under it, named as the app sets it. */
  appData: string;
  /** What app.requestSingleInstanceLock() answers: false when another Trimbench holds the lock. */
  singleInstanceLock?: boolean;
}

let options: StandInOptions = { appData: '/nonexistent' };
/** Paths the app set with app.setPath. */
const setPaths = new Map<string, string>();
let markReady: () => void = () => undefined;
const ready = new Promise<void>((resolve) => (markReady = resolve));
const appEvents = new Events();

/** A frame of a page: the app's top frame, or one inside it. */
export interface FrameStandIn {
  readonly url: string;
  /** The frame this one is inside; null for a page's top frame (as WebFrameMain.parent). */
  readonly parent: FrameStandIn | null;
}

export class WebContentsStandIn {
  readonly events = new Events();
  readonly mainFrame: FrameStandIn;
  windowOpenHandler: ((details: Electron.HandlerDetails) => Electron.WindowOpenHandlerResponse) | null = null;
  readonly printToPdfCalls: Electron.PrintToPDFOptions[] = [];
  readonly printCalls: Electron.WebContentsPrintOptions[] = [];

  constructor(url: string) {
    this.mainFrame = { url, parent: null };
  }
  on(event: string, listener: Listener): this {
    this.events.add(event, listener);
    return this;
  }
  setWindowOpenHandler(handler: (details: Electron.HandlerDetails) => Electron.WindowOpenHandlerResponse): void {
    this.windowOpenHandler = handler;
  }
  printToPDF(pdfOptions: Electron.PrintToPDFOptions): Promise<Buffer> {
    this.printToPdfCalls.push(pdfOptions);
    // What Chromium's output starts and ends with (ISO 32000-1, 7.5.2 and 7.5.5); main checks both.
    return Promise.resolve(Buffer.from('%PDF-1.7\n% stand-in for the page as Chromium prints it\n%%EOF\n'));
  }
  print(printOptions: Electron.WebContentsPrintOptions, callback: (success: boolean, failureReason: string) => void): void {
    this.printCalls.push(printOptions);
    callback(false, 'cancelled');
  }
  /** An event of these contents as Electron emits it (the first argument is Electron's event object). */
  emit(event: string, ...args: unknown[]): void {
    this.events.emit(event, { preventDefault: () => undefined }, ...args);
  }
  /** A navigation the page starts, as Electron emits it: true when the app lets it happen. */
  navigate(url: string): boolean {
    let prevented = false;
    this.events.emit('will-navigate', { preventDefault: () => (prevented = true), url }, url);
    return !prevented;
  }
  /** A <webview> the page tries to attach: true when the app lets it. */
  attachWebview(): boolean {
    let prevented = false;
    this.events.emit('will-attach-webview', { preventDefault: () => (prevented = true) }, {}, {});
    return !prevented;
  }
}

// Compile-time check only: the window and contents stand-ins offer Electron's names with Electron's signatures.
type WindowApi = Pick<Electron.BrowserWindow, 'loadURL' | 'isMinimized' | 'restore' | 'focus' | 'reload'>;
type ContentsApi = Pick<Electron.WebContents, 'setWindowOpenHandler' | 'printToPDF' | 'print'>;

export class BrowserWindow implements WindowApi {
  static readonly created: BrowserWindow[] = [];
  static getAllWindows(): BrowserWindow[] {
    return [...BrowserWindow.created];
  }
  static fromWebContents(contents: unknown): BrowserWindow | null {
    return BrowserWindow.created.find((window) => window.webContents === contents) ?? null;
  }

  readonly webContents: WebContentsStandIn & ContentsApi;
  readonly loadedUrls: string[] = [];
  focusCount = 0;
  reloadCount = 0;
  readonly options: Electron.BrowserWindowConstructorOptions;

  constructor(options: Electron.BrowserWindowConstructorOptions = {}) {
    this.options = options;
    this.webContents = new WebContentsStandIn('about:blank');
    BrowserWindow.created.push(this);
    // Electron announces every new web contents, a window's too, before anything loads in it.
    appEvents.emit('web-contents-created', {}, this.webContents);
  }
  loadURL(url: string): Promise<void> {
    this.loadedUrls.push(url);
    return Promise.resolve();
  }
  isMinimized(): boolean {
    return false;
  }
  restore(): void {}
  focus(): void {
    this.focusCount += 1;
  }
  reload(): void {
    this.reloadCount += 1;
  }
}

export const app: Pick<Electron.App, 'requestSingleInstanceLock' | 'quit' | 'on' | 'whenReady' | 'getPath' | 'setPath'> = {
  requestSingleInstanceLock: () => options.singleInstanceLock ?? true,
  quit: () => {
    recorded.quitCalls += 1;
  },
  on: ((event: string, listener: Listener) => {
    appEvents.add(event, listener);
    return app;
  }) as Electron.App['on'],
  whenReady: () => ready,
  getPath: (name) => {
    const set = setPaths.get(name);
    if (set !== undefined) return set;
    if (name === 'appData') return options.appData;
    // Electron names userData after the app's productName when a packager sets one.
    if (name === 'userData') return `${options.appData}/Trimbench`;
    throw new Error(`stand-in: app.getPath('${name}') is not expected of Trimbench`);
  },
  setPath: (name, path) => {
    setPaths.set(name, path);
  },
};

type PermissionRequestHandler = Parameters<Electron.Session['setPermissionRequestHandler']>[0];
type PermissionCheckHandler = Parameters<Electron.Session['setPermissionCheckHandler']>[0];

/** What the app asked of Electron. */
export const recorded = {
  quitCalls: 0,
  privilegedSchemes: [] as Electron.CustomScheme[],
  protocolHandlers: new Map<string, (request: Request) => Response | Promise<Response>>(),
  ipcHandlers: new Map<string, (event: Electron.IpcMainInvokeEvent, ...args: unknown[]) => unknown>(),
  errorBoxes: [] as { title: string; content: string }[],
  messageBoxes: [] as Electron.MessageBoxSyncOptions[],
  /** Each open dialog with the window it was shown over (null: none). */
  openDialogs: [] as { window: unknown; options: Electron.OpenDialogOptions }[],
  permissionRequestHandler: null as PermissionRequestHandler,
  permissionCheckHandler: null as PermissionCheckHandler,
};

export const protocol: Pick<Electron.Protocol, 'registerSchemesAsPrivileged' | 'handle'> = {
  registerSchemesAsPrivileged: (schemes) => {
    recorded.privilegedSchemes.push(...schemes);
  },
  handle: (scheme, handler) => {
    if (recorded.protocolHandlers.has(scheme)) throw new Error(`stand-in: a second handler for ${scheme}: (Electron refuses it too)`);
    recorded.protocolHandlers.set(scheme, handler as (request: Request) => Response | Promise<Response>);
  },
};

export const ipcMain: Pick<Electron.IpcMain, 'handle'> = {
  handle: (channel, listener) => {
    // Electron throws on a second handler for a channel: so does the stand-in.
    if (recorded.ipcHandlers.has(channel)) throw new Error(`Attempted to register a second handler for '${channel}'`);
    recorded.ipcHandlers.set(channel, listener);
  },
};

export const dialog: Pick<Electron.Dialog, 'showErrorBox' | 'showOpenDialog' | 'showMessageBoxSync'> = {
  showErrorBox: (title, content) => {
    recorded.errorBoxes.push({ title, content });
  },
  showMessageBoxSync: ((...args: unknown[]) => {
    const box = args.at(-1) as Electron.MessageBoxSyncOptions;
    recorded.messageBoxes.push(box);
    // The technician's answer, or Enter on the box's default button.
    const answer = control.nextMessageBoxButton ?? box.defaultId ?? 0;
    control.nextMessageBoxButton = null;
    return answer;
  }) as Electron.Dialog['showMessageBoxSync'],
  showOpenDialog: ((...args: unknown[]) => {
    recorded.openDialogs.push({ window: args.length > 1 ? args[0] : null, options: args.at(-1) as Electron.OpenDialogOptions });
    const chosen = control.nextChosenFile;
    control.nextChosenFile = null;
    return Promise.resolve(chosen === null ? { canceled: true, filePaths: [] } : { canceled: false, filePaths: [chosen] });
  }) as Electron.Dialog['showOpenDialog'],
};

export const net: Pick<Electron.Net, 'fetch'> = {
  // The app fetches only its own files; anything else would be the network, which a test never reaches.
  fetch: async (input) => {
    const url = typeof input === 'string' ? input : input.url;
    if (!url.startsWith('file:')) throw new Error(`stand-in: net.fetch(${url}) would leave this machine`);
    return new Response(await readFile(fileURLToPath(url)), { status: 200 });
  },
};

export const session: { defaultSession: Pick<Electron.Session, 'setPermissionRequestHandler' | 'setPermissionCheckHandler'> } = {
  defaultSession: {
    setPermissionRequestHandler: (handler) => {
      recorded.permissionRequestHandler = handler;
    },
    setPermissionCheckHandler: (handler) => {
      recorded.permissionCheckHandler = handler;
    },
  },
};

/** How a test drives the stand-in: its answers before the bundle starts, then Electron's events. */
export const control = {
  /** The file the technician picks in the next open dialog; null cancels it. */
  nextChosenFile: null as string | null,
  /** The button the technician presses in the next message box (its index); null presses its default. */
  nextMessageBoxButton: null as number | null,
  configure(given: StandInOptions): void {
    options = given;
  },
  /** Electron is ready: resolves app.whenReady() and lets what the app chained on it run. */
  async ready(): Promise<void> {
    markReady();
    for (let i = 0; i < 5; i++) await new Promise((resolve) => setImmediate(resolve));
  },
  emitApp(event: string, ...args: unknown[]): void {
    appEvents.emit(event, ...args);
  },
  windows(): BrowserWindow[] {
    return BrowserWindow.getAllWindows();
  },
};
