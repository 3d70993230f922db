import FFT from 'fft.js';
import { describe, expect, it } from 'vitest';
import { SineSource, STIMULUS_RAMP_S } from '../../shared/dsp/sine-source.ts';
import { SQUARE_MAX_LEVEL_DBFS } from '../../shared/dsp/square-wave.ts';

function render(source: SineSource, frames: number): Float32Array {
  const out = new Float32Array(frames);
  for (let at = 0; at < frames; at += 128) source.fill(out.subarray(at, Math.min(frames, at + 128)));
  return out;
}

/** Amplitude of each bin of a real block (rectangular window: the block holds whole periods). */
function amplitudes(x: Float32Array): Float64Array {
  const n = x.length;
  const fft = new FFT(n);
  const out = fft.createComplexArray() as number[];
  fft.realTransform(out, Array.from(x));
  fft.completeSpectrum(out);
  const a = new Float64Array(n / 2 + 1);
  for (let k = 0; k <= n / 2; k++) a[k] = (Math.hypot(out[2 * k], out[2 * k + 1]) * (k === 0 || k === n / 2 ? 1 : 2)) / n;
  return a;
}

const peak = (x: Float32Array) => x.reduce((m, v) => Math.max(m, Math.abs(v)), 0);

describe('band-limited square wave', () => {
  // The square's Fourier series: (4/π)·Σ sin(nx)/n over odd n, i.e. odd harmonics at 4/(nπ) of the
  // flat top and nothing else (any table of Fourier series; Kreyszig, Advanced Engineering Mathematics).
  it.each([
    { rate: 48000, binsPerPeriod: 64 },
    { rate: 48000, binsPerPeriod: 80 },
    { rate: 96000, binsPerPeriod: 48 },
  ])('holds odd harmonics at 4/(nπ) of the top below Nyquist and nothing else (rate $rate, $binsPerPeriod bins a period)', ({ rate, binsPerPeriod }) => {
    const n = 4096;
    const f = (rate * binsPerPeriod) / n;
    const level = -6;
    const top = 10 ** (level / 20);
    const source = new SineSource(rate);
    source.set({ frequencyHz: f, levelDbfs: level, on: true, waveform: 'square' });
    render(source, 4 * STIMULUS_RAMP_S * rate);
    const a = amplitudes(render(source, n));
    let harmonics = 0;
    for (let k = 1; k <= n / 2; k++) {
      const order = k / binsPerPeriod;
      if (Number.isInteger(order) && order % 2 === 1 && order * f < rate / 2) {
        // Float32 samples: about 1e-7 of the top.
        expect(Math.abs(a[k] - (4 * top) / (order * Math.PI))).toBeLessThan(2e-6);
        harmonics++;
      } else {
        // No even harmonic, no harmonic at or above Nyquist and no alias of one folded back: a naive
        // ±1 square would put its 27th harmonic of 937.5 Hz at 22687.5 Hz, bin 1936, here.
        expect(a[k]).toBeLessThan(1e-6);
      }
    }
    expect(harmonics).toBe(Math.ceil((rate / (2 * f) - 1) / 2));
  });

  it('never exceeds full scale, whatever level and frequency are asked for', () => {
    for (const rate of [44100, 48000, 96000, 192000]) {
      for (const f of [20, 50, 101, 997, 1000, 3001, 7000, 9000, 11000, 15999, 20000, 23000]) {
        const source = new SineSource(rate);
        source.set({ frequencyHz: f, levelDbfs: 0, on: true, waveform: 'square' });
        expect(peak(render(source, Math.round(rate * 0.2)))).toBeLessThanOrEqual(1);
      }
    }
  });

  it('its ceiling is the level whose fundamental alone is a full-scale sine: 20·log10(π/4) dBFS', () => {
    // 4/π · 10^(L/20) = 1 ⇒ L = 20·log10(π/4) = −2.098 dB (from the 4/(nπ) law above).
    expect(SQUARE_MAX_LEVEL_DBFS).toBeCloseTo(-2.098, 3);
    // 20 kHz at 48 kHz keeps only its fundamental (60 kHz is past Nyquist): a full-scale sine.
    const source = new SineSource(48000);
    source.set({ frequencyHz: 12000, levelDbfs: 0, on: true, waveform: 'square' });
    render(source, 4800);
    expect(peak(render(source, 4800))).toBeCloseTo(1, 4);
  });

  it('a change of waveform while playing fades out to silence and back in, never a step', () => {
    const rate = 48000;
    const source = new SineSource(rate);
    source.set({ frequencyHz: 1000, levelDbfs: -6, on: true });
    render(source, rate / 10);
    source.set({ frequencyHz: 1000, levelDbfs: -6, on: true, waveform: 'square' });
    let reachedSilence = false;
    let previousGain = source.currentGain;
    for (let sample = 0; sample < 3 * STIMULUS_RAMP_S * rate; sample++) {
      render(source, 1);
      if (source.currentGain === 0) reachedSilence = true;
      // The gain moves by at most a ramp's share each sample (20 ms from 0 to the level).
      expect(Math.abs(source.currentGain - previousGain)).toBeLessThanOrEqual(10 ** (-6 / 20) / (STIMULUS_RAMP_S * rate) + 1e-12);
      previousGain = source.currentGain;
    }
    expect(reachedSilence).toBe(true);
    expect(source.currentGain).toBeCloseTo(10 ** (-6 / 20), 12);
  });
});
