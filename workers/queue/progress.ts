/**
 * Progress counts of a job tree, overall and per processor name (so a caller
 * can say "scenes done" rather than "jobs done"), kept incrementally.
 */
import type { FlowProgress } from './types.js';

/** A set of job ids that also counts its members per processor name. */
export class NamedIdSet {
  private readonly ids = new Set<string>();
  private readonly counts = new Map<string, number>();
  constructor(private readonly nameOf: (id: string) => string) {}

  get size(): number {
    return this.ids.size;
  }
  has(id: string): boolean {
    return this.ids.has(id);
  }
  add(id: string): void {
    if (this.ids.has(id)) return;
    this.ids.add(id);
    const n = this.nameOf(id);
    this.counts.set(n, (this.counts.get(n) ?? 0) + 1);
  }
  delete(id: string): void {
    if (!this.ids.delete(id)) return;
    const n = this.nameOf(id);
    this.counts.set(n, (this.counts.get(n) ?? 1) - 1);
  }
  clear(): void {
    this.ids.clear();
    this.counts.clear();
  }
  count(name: string): number {
    return this.counts.get(name) ?? 0;
  }
}

/** Totals per processor name of a tree's nodes. */
export function totalsByName(names: Iterable<string>): Map<string, number> {
  const out = new Map<string, number>();
  for (const n of names) out.set(n, (out.get(n) ?? 0) + 1);
  return out;
}

/** The FlowProgress of done/failed sets, with per-name counts. */
export function progressOf(done: NamedIdSet, failed: NamedIdSet, totals: Map<string, number>, running: number): FlowProgress {
  const byName: NonNullable<FlowProgress['byName']> = {};
  let total = 0;
  for (const [name, t] of totals) {
    byName[name] = { done: done.count(name), failed: failed.count(name), total: t };
    total += t;
  }
  return { done: done.size, failed: failed.size, total, running, byName };
}
