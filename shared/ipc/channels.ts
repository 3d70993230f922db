// Channel names of the one IPC contract. Kept apart from the schemas so the preload can list
// the API without bundling zod; each name is also the method name on window.trimbench.

export const IPC_CHANNELS = [
  'describeStation',
  'listProcedures',
  'openRun',
  'lookUpUnit',
  'recordTrimPoint',
  'includeUnsettledPoint',
  'logWarningChanges',
  'recordWarmCheck',
  'acknowledgeNotice',
  'completeTrim',
  'recordCheckStep',
  'attachScopeCapture',
  'recordMaxLevel',
  'recordResponse',
  'finishRun',
  'saveSheetPdf',
  'printSheet',
  'getStationCalibration',
  'saveStationSettings',
  'recordCalibration',
  'recordChainCheck',
  'listCalibrations',
  'importProcedure',
  'listProcedureRevisions',
] as const;

export type IpcChannel = (typeof IPC_CHANNELS)[number];

/** The Electron ipcMain/ipcRenderer channel for a contract name. */
export const ipcChannelName = (channel: IpcChannel): string => `trimbench:${channel}`;
