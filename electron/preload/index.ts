// Exposes exactly the IPC contract as window.trimbench, one method per channel, nothing else.
// No zod here: main validates every payload; the channel list is all the preload needs.

import { contextBridge, ipcRenderer } from 'electron';
import { IPC_CHANNELS, ipcChannelName } from '../../shared/ipc/channels.ts';

const bridge = Object.fromEntries(
  IPC_CHANNELS.map((channel) => [channel, (request: unknown) => ipcRenderer.invoke(ipcChannelName(channel), request)]),
);

contextBridge.exposeInMainWorld('trimbench', bridge);
