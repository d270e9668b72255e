// Types for the CommonJS FFT package 'fft-js' used as an independent check in tests.
declare module 'fft-js' {
  export function fft(signal: number[] | [number, number][]): [number, number][];
  export function ifft(signal: [number, number][]): [number, number][];
  export const util: {
    fftMag(bins: [number, number][]): number[];
    fftFreq(bins: [number, number][], sampleRate: number): number[];
  };
}
