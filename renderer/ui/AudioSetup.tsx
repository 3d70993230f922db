import { DEMO_INPUT, type AudioDevices } from '../audio/bench-audio.ts';

export interface AudioChoice {
  inputDeviceId: string;
  outputDeviceId: string;
  sampleRateHz: number;
  channel: number;
  /** The input channel a two-channel unit's channel 2 comes in on; null for a one-channel unit. */
  secondChannel: number | null;
  mainsHz: 50 | 60;
  /** Generator output and capture input on the same interface, so one clock runs both. */
  sharedClock: boolean;
}

const SAMPLE_RATES = [44100, 48000, 88200, 96000, 192000];

export function AudioSetup({
  devices,
  choice,
  onChange,
  capturing,
  starting,
  capturePath,
  sampleRateHz,
  discontinuities,
  onStart,
  onStop,
  onRefresh,
}: {
  devices: AudioDevices | null;
  choice: AudioChoice;
  onChange(choice: AudioChoice): void;
  capturing: boolean;
  /** Capture is being opened (a permission prompt may be up). */
  starting: boolean;
  capturePath: string | null;
  sampleRateHz: number | null;
  discontinuities: number;
  onStart(): void;
  onStop(): void;
  onRefresh(): void;
}) {
  const set = (patch: Partial<AudioChoice>) => onChange({ ...choice, ...patch });
  const demo = choice.inputDeviceId === DEMO_INPUT;
  return (
    <section className="panel" aria-label="Audio interface">
      <h2>Audio interface</h2>
      <label>
        Input
        <select
          data-testid="input-select"
          value={choice.inputDeviceId}
          onChange={(e) => set({ inputDeviceId: e.target.value })}
          disabled={capturing}
        >
          <option value={DEMO_INPUT}>Demo bench (simulated unit)</option>
          <option value="">System default input</option>
          {devices?.inputs.map((d, i) => (
            <option key={d.deviceId || i} value={d.deviceId}>
              {d.label || `Input ${i + 1}`}
            </option>
          ))}
        </select>
      </label>
      <label>
        Input channel carrying the unit
        <select
          value={choice.channel}
          onChange={(e) => {
            const channel = Number(e.target.value);
            set({ channel, secondChannel: choice.secondChannel === channel ? null : choice.secondChannel });
          }}
          disabled={capturing || demo}
        >
          {Array.from({ length: 8 }, (_, ch) => (
            <option key={ch} value={ch}>
              Channel {ch + 1}
            </option>
          ))}
        </select>
      </label>
      <label>
        A two-channel unit's channel 2 comes in on
        <select
          data-testid="second-channel-select"
          value={choice.secondChannel ?? ''}
          onChange={(e) => set({ secondChannel: e.target.value === '' ? null : Number(e.target.value) })}
          disabled={capturing || demo}
        >
          <option value="">None (a one-channel unit)</option>
          {Array.from({ length: 8 }, (_, ch) => ch)
            .filter((ch) => ch !== choice.channel)
            .map((ch) => (
              <option key={ch} value={ch}>
                Channel {ch + 1}
              </option>
            ))}
        </select>
      </label>
      <label>
        Output (generator)
        <select value={choice.outputDeviceId} onChange={(e) => set({ outputDeviceId: e.target.value })} disabled={capturing || demo}>
          <option value="">System default output</option>
          {devices?.outputs.map((d, i) => (
            <option key={d.deviceId || i} value={d.deviceId}>
              {d.label || `Output ${i + 1}`}
            </option>
          ))}
        </select>
      </label>
      <label>
        Sample rate
        <select value={choice.sampleRateHz} onChange={(e) => set({ sampleRateHz: Number(e.target.value) })} disabled={capturing || demo}>
          {SAMPLE_RATES.map((rate) => (
            <option key={rate} value={rate}>
              {rate / 1000} kHz
            </option>
          ))}
        </select>
      </label>
      {demo && (
        <p className="invented">
          The demo bench simulates a transformer output stage with a virtual trimmer: the position you type in the trim step turns it.
          Nothing is played through the speakers. Its values are invented for practice.
        </p>
      )}
      <label>
        Mains frequency (for hum)
        <select value={choice.mainsHz} onChange={(e) => set({ mainsHz: Number(e.target.value) as 50 | 60 })}>
          <option value={50}>50 Hz</option>
          <option value={60}>60 Hz</option>
        </select>
      </label>
      <label className="check">
        <input type="checkbox" checked={choice.sharedClock} onChange={(e) => set({ sharedClock: e.target.checked })} />
        Output and input are on one interface (one clock): analyse in step with the generator
      </label>
      <div className="row">
        {capturing ? (
          <button type="button" onClick={onStop}>
            Stop capture
          </button>
        ) : (
          <button type="button" className="primary" onClick={onStart} disabled={starting}>
            {starting ? 'Starting…' : 'Start capture'}
          </button>
        )}
        <button type="button" onClick={onRefresh} disabled={capturing}>
          Refresh devices
        </button>
      </div>
      {capturing && (
        // How samples arrive is an implementation detail: kept in an attribute for tests, not shown.
        <p className="hint" data-testid="capture-status" data-capture-path={capturePath ?? ''}>
          Capturing at {sampleRateHz ? `${sampleRateHz / 1000} kHz` : '—'} from {demo ? 'the demo bench' : 'the input'}
          {' · '}
          <span data-testid="discontinuities">{discontinuities}</span> capture break{discontinuities === 1 ? '' : 's'} (no reading spans one)
        </p>
      )}
      {capturing && sampleRateHz !== null && sampleRateHz !== choice.sampleRateHz && (
        <p className="hint" role="status" data-testid="rate-note">
          {demo
            ? `The demo bench runs at ${sampleRateHz / 1000} kHz; the rate chosen above applies to a real interface.`
            : `The interface runs at ${sampleRateHz / 1000} kHz, not the ${choice.sampleRateHz / 1000} kHz chosen: readings use ${sampleRateHz / 1000} kHz.`}
        </p>
      )}
    </section>
  );
}
