declare module 'fft-js' {
  export function fft(signal: number[]): [number, number][];
}
