// Fallback capture path (where MediaStreamTrackProcessor is missing): copies the chosen input
// channel into pooled buffers and transfers each full one to the analysis worker, which hands it
// back. The pool only grows if the worker falls behind, so the steady state allocates nothing.

const BLOCK_FRAMES = 4096;

class CaptureTap extends AudioWorkletProcessor {
  private workerPort: MessagePort | null = null;
  private readonly pool: Float32Array[] = [];
  private current: Float32Array = new Float32Array(BLOCK_FRAMES);
  private filled = 0;
  private channel: number;

  constructor(options?: unknown) {
    super(options);
    this.channel = (options as { processorOptions?: { channel?: number } })?.processorOptions?.channel ?? 0;
    this.port.onmessage = (event: MessageEvent<{ port: MessagePort }>) => {
      this.workerPort = event.data.port;
      this.workerPort.onmessage = (returned: MessageEvent<{ samples: Float32Array }>) => this.pool.push(returned.data.samples);
    };
  }

  process(inputs: Float32Array[][]): boolean {
    const input = inputs[0];
    const source = input && this.channel < input.length ? input[this.channel] : null;
    const frames = source ? source.length : 128;
    for (let i = 0; i < frames; i++) {
      this.current[this.filled++] = source ? source[i] : 0;
      if (this.filled === BLOCK_FRAMES) this.flush();
    }
    return true;
  }

  private flush(): void {
    const full = this.current;
    this.current = this.pool.pop() ?? new Float32Array(BLOCK_FRAMES);
    this.filled = 0;
    this.workerPort?.postMessage({ samples: full, length: BLOCK_FRAMES }, [full.buffer]);
  }
}

registerProcessor('trimbench-capture', CaptureTap);
