// A list worked through a few items at a time: `atOnce` waits are under way together, and no closure or promise is made
// per item beforehand (lists of 100,000 recordings stay cheap).

/** Calls `work(item, index)` for every item, at most `atOnce` at a time, and resolves once all are done; `stop` ends it early. */
export async function eachAtOnce<T>(items: readonly T[], atOnce: number, work: (item: T, index: number) => Promise<void>, stop: () => boolean = () => false): Promise<void> {
  let next = 0;
  await Promise.all(Array.from({ length: Math.min(atOnce, items.length) }, async () => {
    while (next < items.length && !stop()) { const i = next++; await work(items[i], i); }
  }));
}
