// Rising (or falling) edges of a pulse train, streaming: a comparator with hysteresis (Schmitt trigger), each edge timed to a fraction of a sample.

/**
 * Where an edge is timed (level) and how far the signal must swing around it to count (hysteresis, the full band width); `falling`:
 * edges timed as the signal falls through the level (armed above it, fired below), where a bipolar pulse falls between its lobes.
 */
export interface Trigger { level: number; hysteresis: number; falling?: boolean }

/** Detects rising edges chunk by chunk, holding only the previous sample; reports each edge as a fractional sample index. */
export class PulseEdges {
  private armed = false;
  private prev = Number.NaN;
  private crossing = Number.NaN;

  /** `next`: index of the first sample pushed, when the samples before it are not timed. */
  constructor(private trigger: Trigger, private readonly onEdge: (at: number) => void, private next = 0) {}

  /** The next sample pushed is sample `index`: those before it are not timed, so the comparator starts again, disarmed. */
  skipTo(index: number): void {
    this.next = index;
    this.armed = false;
    this.prev = Number.NaN;
    this.crossing = Number.NaN;
  }

  /** Times the samples pushed from now on against another trigger (a level that follows a drifting signal); another direction starts disarmed. */
  retrigger(trigger: Trigger): void {
    if ((trigger.falling ?? false) !== (this.trigger.falling ?? false)) { this.armed = false; this.prev = Number.NaN; this.crossing = Number.NaN; }
    this.trigger = trigger;
  }

  // Schmitt trigger (common practice): arm below level − h/2, fire above level + h/2, so noise on a slow edge counts once.
  // The edge is the last upward crossing of the level before firing, timed by linear interpolation between the two samples around it.
  // Falling edges are the rising edges of the signal turned over (−x against −level), timed the same way.
  push(x: Float64Array): void {
    const sign = this.trigger.falling ? -1 : 1;
    const level = sign * this.trigger.level, { hysteresis } = this.trigger;
    const low = level - hysteresis / 2, high = level + hysteresis / 2;
    let { armed, prev, crossing } = this;
    for (let i = 0; i < x.length; i++) {
      const v = sign * x[i];
      if (!armed) {
        if (v < low) { armed = true; crossing = Number.NaN; }
      } else {
        if (prev < level && v >= level) crossing = this.next + i - 1 + (level - prev) / (v - prev);
        // A gap (non-finite samples) across the crossing leaves the edge untimed: it is skipped, not guessed.
        if (v > high) { if (Number.isFinite(crossing)) this.onEdge(crossing); armed = false; }
      }
      prev = v;
    }
    this.next += x.length;
    this.armed = armed;
    this.prev = prev;
    this.crossing = crossing;
  }
}
