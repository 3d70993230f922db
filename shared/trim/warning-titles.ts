import type { TrimWarning } from './trim-assistant.ts';

/** Each trim warning's short title, as the bench and the unit sheet name it. */
export const WARNING_TITLES: Record<TrimWarning['id'], string> = {
  'gain-rise': 'Gain rising',
  'lf-instability': 'Low-frequency instability',
  'amplitude-wander': 'Level wandering',
  clipping: 'Clipping',
  'past-null': 'Past the null',
};
