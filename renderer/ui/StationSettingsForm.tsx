import { useRef, useState } from 'react';
import { DEFAULT_CHAIN_LIMITS, DEFAULT_CHAIN_LIMITS_NOTE, type ChainLimits } from '../../shared/calibration/chain-check.ts';
import type { AudioSetup } from '../../shared/calibration/station-calibration.ts';
import type { StationSettings } from '../../shared/calibration/station-settings.ts';
import { problemText } from '../problem-text.ts';

type NumericLimit = Exclude<keyof ChainLimits, 'requireLatency' | 'noiseAWeightedMaxDbu'>;

/** The chain limits a line sets, in the order a technician reads a chain check. */
const LIMIT_FIELDS: { key: NumericLimit; label: string; unit: string }[] = [
  { key: 'residualThdnAt1kHzMaxDb', label: 'Residual THD+N at 1 kHz, at most', unit: 'dB' },
  { key: 'residualThdMaxDb', label: 'Residual THD, at most', unit: 'dB' },
  { key: 'residualThdLowFrequencyMaxDb', label: 'Residual THD at low frequencies, at most', unit: 'dB' },
  { key: 'lowFrequencyBelowHz', label: 'Low frequencies are below', unit: 'Hz' },
  { key: 'noiseUnweightedMaxDbfs', label: 'Noise floor, unweighted, at most', unit: 'dBFS' },
  { key: 'noiseAWeightedMaxDbfs', label: 'Noise floor, A-weighted, at most', unit: 'dBFS' },
  { key: 'flatnessDb', label: 'Response flat within ±', unit: 'dB' },
  { key: 'flatnessBandLowHz', label: 'Flatness band from', unit: 'Hz' },
  { key: 'flatnessBandHighHz', label: 'Flatness band to', unit: 'Hz' },
];

export function describeSetup(setup: AudioSetup): string {
  const channels = setup.secondInputChannel == null ? `channel ${setup.inputChannel + 1}` : `channels ${setup.inputChannel + 1} and ${setup.secondInputChannel + 1}`;
  return `${setup.inputDeviceLabel} (${channels}) → ${setup.outputDeviceLabel}, ${setup.sampleRateHz / 1000} kHz`;
}

type Draft = Record<NumericLimit | 'noiseAWeightedMaxDbu' | 'calibrationExpiryDays', string>;

function draftFrom(settings: StationSettings): Draft {
  const limits = settings.chainLimits;
  const draft = { calibrationExpiryDays: String(settings.calibrationExpiryDays), noiseAWeightedMaxDbu: limits.noiseAWeightedMaxDbu === null ? '' : String(limits.noiseAWeightedMaxDbu) } as Draft;
  for (const field of LIMIT_FIELDS) draft[field.key] = String(limits[field.key]);
  return draft;
}

/** A typed number: a minus sign as this app prints it (U+2212) is read as one. */
function parseNumber(text: string): number | null {
  const trimmed = text.trim().replace(/\u2212/g, '-');
  if (!/^[+-]?(?:\d+(?:\.\d*)?|\.\d+)$/.test(trimmed)) return null;
  return Number(trimmed);
}

export function StationSettingsForm({
  settings,
  currentSetup,
  onSave,
}: {
  settings: StationSettings;
  /** The audio setup chosen now (with capture running, the rate it runs at); null when it cannot be described. */
  currentSetup: AudioSetup | null;
  onSave(next: StationSettings): Promise<void>;
}) {
  const [stationName, setStationName] = useState(settings.stationName);
  const [mainsHz, setMainsHz] = useState<50 | 60>(settings.mainsHz);
  const [draft, setDraft] = useState<Draft>(() => draftFrom(settings));
  const [requireLatency, setRequireLatency] = useState(settings.chainLimits.requireLatency);
  const [useCurrentAudio, setUseCurrentAudio] = useState(false);
  const [message, setMessage] = useState<{ text: string; ok: boolean } | null>(null);
  const saving = useRef(false);
  const [busy, setBusy] = useState(false);

  const set = (key: keyof Draft, value: string) => setDraft((d) => ({ ...d, [key]: value }));

  async function save() {
    if (saving.current) return;
    const limits = { ...settings.chainLimits, requireLatency } as ChainLimits;
    for (const field of LIMIT_FIELDS) {
      const value = parseNumber(draft[field.key]);
      if (value === null) return setMessage({ ok: false, text: `“${field.label}” is not a number; type a plain number in ${field.unit}, such as ${DEFAULT_CHAIN_LIMITS[field.key]}.` });
      limits[field.key] = value;
    }
    if (draft.noiseAWeightedMaxDbu.trim() === '') limits.noiseAWeightedMaxDbu = null;
    else {
      const value = parseNumber(draft.noiseAWeightedMaxDbu);
      if (value === null) return setMessage({ ok: false, text: '“Noise floor, A-weighted, at the input” is not a number; type it in dBu (such as −110), or leave it empty not to judge it.' });
      limits.noiseAWeightedMaxDbu = value;
    }
    const expiry = parseNumber(draft.calibrationExpiryDays);
    if (expiry === null || !Number.isInteger(expiry)) return setMessage({ ok: false, text: '“Calibration holds for” is not a whole number of days; type one, such as 30.' });
    if (useCurrentAudio && !currentSetup) return setMessage({ ok: false, text: 'No audio setup is chosen yet; choose the input and output, then save again.' });
    saving.current = true;
    setBusy(true);
    setMessage(null);
    try {
      await onSave({
        stationName,
        mainsHz,
        calibrationExpiryDays: expiry,
        chainLimits: limits,
        defaultAudio: useCurrentAudio ? currentSetup : settings.defaultAudio,
      });
      setUseCurrentAudio(false);
      setMessage({ ok: true, text: 'Station settings saved.' });
    } catch (error) {
      // Main's refusals are written for the technician and name the field: shown as they come.
      setMessage({ ok: false, text: problemText(error, 'The station settings were not saved', 'Check the fields and press Save settings again.') });
    } finally {
      saving.current = false;
      setBusy(false);
    }
  }

  return (
    <section className="panel station-settings" aria-label="Station settings">
      <h2>Station settings</h2>
      <form
        onSubmit={(e) => {
          e.preventDefault();
          void save();
        }}
      >
        <label>
          Station name
          <input data-testid="station-name" value={stationName} onChange={(e) => setStationName(e.target.value)} maxLength={64} autoComplete="off" />
        </label>
        <label>
          Mains frequency at this station (the bench starts with it)
          <select data-testid="station-mains" value={mainsHz} onChange={(e) => setMainsHz(Number(e.target.value) as 50 | 60)}>
            <option value={50}>50 Hz</option>
            <option value={60}>60 Hz</option>
          </select>
        </label>
        <label>
          Calibration holds for (days)
          <input data-testid="station-expiry" inputMode="numeric" value={draft.calibrationExpiryDays} onChange={(e) => set('calibrationExpiryDays', e.target.value)} />
        </label>
        <p className="hint" data-testid="default-audio">
          Default audio at start: {settings.defaultAudio ? describeSetup(settings.defaultAudio) : 'none saved (the bench starts on the system default)'}
        </p>
        <label className="check">
          <input type="checkbox" data-testid="use-current-audio" checked={useCurrentAudio} onChange={(e) => setUseCurrentAudio(e.target.checked)} disabled={!currentSetup} />
          Use the current audio setup as the station's default{currentSetup ? ` (${describeSetup(currentSetup)})` : ''}
        </label>
        <fieldset className="chain-limits">
          <legend>Chain check limits</legend>
          <p className="invented" data-testid="chain-limits-note">{DEFAULT_CHAIN_LIMITS_NOTE}</p>
          <div className="limits-grid">
            {LIMIT_FIELDS.map((field) => (
              <label key={field.key}>
                {field.label} ({field.unit})
                <input inputMode="decimal" data-testid={`limit-${field.key}`} value={draft[field.key]} onChange={(e) => set(field.key, e.target.value)} />
              </label>
            ))}
            <label>
              Noise floor, A-weighted, at the input, at most (dBu; empty: not judged)
              <input inputMode="decimal" data-testid="limit-noiseAWeightedMaxDbu" value={draft.noiseAWeightedMaxDbu} onChange={(e) => set('noiseAWeightedMaxDbu', e.target.value)} />
            </label>
          </div>
          <label className="check">
            <input type="checkbox" checked={requireLatency} onChange={(e) => setRequireLatency(e.target.checked)} />
            A chain check must measure the round-trip latency (proof that the loop carried the stimulus)
          </label>
        </fieldset>
        <button type="submit" className="primary" data-testid="save-settings" disabled={busy}>
          {busy ? 'Saving…' : 'Save settings'}
        </button>
        <p className={message?.ok ? 'hint' : 'problem'} role={message?.ok ? 'status' : 'alert'} data-testid="settings-message" hidden={message === null}>
          {message?.text}
        </p>
      </form>
    </section>
  );
}
