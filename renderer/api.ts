// Typed calls to main through window.trimbench (the preload in Electron, the harness bridge in
// tests). Failures come back as data and are thrown here as ApiError with the technician's message.

import type { IpcChannel } from '../shared/ipc/channels.ts';
import type { IpcRequest, IpcResponse, IpcResult, TrimbenchBridge } from '../shared/ipc/contract.ts';

declare global {
  interface Window {
    trimbench?: TrimbenchBridge;
  }
}

export class ApiError extends Error {
  override name = 'ApiError';
  /** The kind main gave: 'ExpectedFailure' for a refusal with what to do, 'CannotPass' for a run refused with its reasons, 'InvalidRequest', 'InternalError'. */
  readonly kind: string;
  constructor(message: string, kind = 'ApiError') {
    super(message);
    this.kind = kind;
  }
}

export async function call<C extends IpcChannel>(channel: C, request: IpcRequest<C>): Promise<IpcResponse<C>> {
  const bridge = window.trimbench;
  if (!bridge) throw new ApiError('Trimbench is not connected to its records service (no bridge on this page).');
  const invoke = bridge[channel] as unknown as (request: IpcRequest<C>) => Promise<IpcResult<IpcResponse<C>>>;
  const result = await invoke(request);
  if (!result.ok) throw new ApiError(result.error.message, result.error.name);
  return result.value;
}
