/**
 * The page's side of the compute worker: `await client.call('openImage', { file, fileName })`.
 * Requests are matched to replies by id; a failed call rejects with an Error carrying the
 * worker's error name and message.
 */
import type { CallArgs, CallName, CallResult, ComputeRequest, ComputeResponse } from './compute-protocol';

/** An error raised inside the worker, re-raised on the page. */
export class ComputeError extends Error {
  constructor(name: string, message: string) {
    super(message);
    this.name = name;
  }
}

export class ComputeClient {
  private readonly worker: Worker;
  private nextId = 1;
  private readonly pending = new Map<number, { resolve: (v: unknown) => void; reject: (e: Error) => void }>();

  /** Starts the worker (default: compute-worker.js beside the page). */
  constructor(url: string | URL = 'compute-worker.js') {
    this.worker = new Worker(url, { type: 'module', name: 'compute' });
    this.worker.onmessage = (event: MessageEvent<ComputeResponse>) => {
      const reply = event.data;
      const p = this.pending.get(reply.id);
      if (!p) return;
      this.pending.delete(reply.id);
      if (reply.ok) p.resolve(reply.result);
      else p.reject(new ComputeError(reply.error.name, reply.error.message));
    };
    this.worker.onerror = (event) => {
      const err = new ComputeError('WorkerError', `the compute worker failed: ${event.message || 'it could not be started'}`);
      for (const p of this.pending.values()) p.reject(err);
      this.pending.clear();
    };
  }

  /**
   * Sends one call. `transfer` lists ArrayBuffers handed over to the worker (they become
   * unusable here); leave it empty to keep the page's copies.
   */
  call<K extends CallName>(name: K, args: CallArgs<K>, transfer: Transferable[] = []): Promise<CallResult<K>> {
    const id = this.nextId++;
    return new Promise<CallResult<K>>((resolve, reject) => {
      this.pending.set(id, { resolve: resolve as (v: unknown) => void, reject });
      const request: ComputeRequest = { id, name, args };
      this.worker.postMessage(request, transfer);
    });
  }

  /** Stops the worker; pending calls reject. */
  terminate(): void {
    this.worker.terminate();
    for (const p of this.pending.values()) p.reject(new ComputeError('AbortError', 'the compute worker was stopped'));
    this.pending.clear();
  }
}
