// spectra.parquet's rows of one recording, straight into typed columns: every bin of every channel's kept spectrum, a row
// each (thousands a recording, the most of any table), made in the workers' slices from the entries they read anyway.
import { unpackSpectrum } from '../../stages/spectra.js';
import { SPECTRA_TABLE } from '../trends/tables.js';
import type { CacheEntry } from '../store/record.js';
import type { Column, NumberColumn, TextColumn } from './arrow-columns.js';

export function addSpectra(e: CacheEntry, into: Record<string, Column>): void {
  const kept = e.status === 'reduced' ? e.groups.spectrum?.kept?.spectrum : undefined;
  if (!kept || !e.base) return;
  const [recording, channel, unit, frequency, density] = SPECTRA_TABLE.map((c) => into[c.name]) as [TextColumn, TextColumn, TextColumn, NumberColumn, NumberColumn];
  for (const [c, ch] of e.base.channels.entries()) {
    const s = unpackSpectrum(kept[c]);
    if (!s) continue;
    const n = s.density.length;
    recording.add(e.recording, n); channel.add(ch.name, n); unit.add(ch.unit, n);
    frequency.addRamp(n, s.df);
    density.addAll(s.density);
  }
}
