// Turning points (peaks and valleys) of a history, streaming, with a hysteresis gate: a reversal counts only once the signal
// has come back from the last extreme by more than the gate, so every range between consecutive turning points exceeds it
// (ASTM E1049-85 (2017) counts on peaks and valleys; filtering small reversals by a gate is common practice).
// The first turning point is the extreme from which the first move of more than the gate starts; the last is the final extreme.
export class TurningPoints {
  private dir = 0; // +1 rising, −1 falling, 0 before the first move beyond the gate
  private extreme = NaN; // the candidate peak (rising) or valley (falling)
  private hi = NaN;
  private lo = NaN;

  constructor(private readonly gate: number, private readonly emit: (value: number) => void) {
    if (!(gate >= 0)) throw new Error(`the rainflow gate must be zero or more, got ${gate}`);
  }

  /** Samples in order; missing (non-finite) ones are passed over. */
  push(x: Float64Array): void {
    const h = this.gate;
    for (let i = 0; i < x.length; i++) {
      const v = x[i];
      if (!Number.isFinite(v)) continue;
      if (this.dir > 0) {
        if (v > this.extreme) this.extreme = v;
        else if (this.extreme - v > h) { this.emit(this.extreme); this.dir = -1; this.extreme = v; }
      } else if (this.dir < 0) {
        if (v < this.extreme) this.extreme = v;
        else if (v - this.extreme > h) { this.emit(this.extreme); this.dir = 1; this.extreme = v; }
      } else if (Number.isNaN(this.hi)) {
        this.hi = this.lo = v;
      } else {
        if (v > this.hi) this.hi = v;
        if (v < this.lo) this.lo = v;
        if (this.hi - this.lo > h) {
          // v made the spread: it is the new high (a rise from the low) or the new low (a fall from the high).
          const rising = v === this.hi;
          this.emit(rising ? this.lo : this.hi);
          this.dir = rising ? 1 : -1;
          this.extreme = v;
        }
      }
    }
  }

  /** Ends the history: the last extreme is a turning point. */
  finish(): void {
    if (this.dir !== 0) this.emit(this.extreme);
    this.dir = 0;
  }
}
