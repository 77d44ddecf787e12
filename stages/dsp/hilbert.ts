// Envelope as the magnitude of the analytic signal, by FFT (Marple, IEEE Trans. SP 47(9), 1999), computed block-wise:
// each block is transformed with `context` samples of signal on either side, tapered by half-Hann ramps, and only its
// middle is kept. For band-limited signals the Hilbert transform acts locally (Bedrosian 1963), so the ramps leave no
// trace. The record starts and ends abruptly (zeros beyond it), as a whole-record transform sees it.
import { AnalyticFilter, analyticGains } from './analytic.js';

export class StreamingEnvelope {
  private readonly filter: AnalyticFilter;

  constructor(emit: (env: Float64Array) => void, size = 16384, context = 2048) {
    // No filter: the analytic signal of the samples themselves.
    this.filter = new AnalyticFilter(() => analyticGains(size, 1, null, false), 'unfiltered', { size, context, ramp: context, extension: 'zero' }, (_, abs) => emit(abs));
  }

  push(x: Float64Array): void { this.filter.push(x); }
  finish(): void { this.filter.finish(); }
}
