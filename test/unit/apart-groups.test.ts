import { describe, expect, it } from 'vitest';
import { ApartGroups } from '../../src/link/apart-groups.js';

describe('pairs kept apart during a consolidation pass', () => {
  it('keeps two events apart directly and through a third that would absorb both', () => {
    const g = new ApartGroups(['ev_a\nev_b']);
    expect(g.keptApart('ev_a', 'ev_b')).toBe(true);
    expect(g.keptApart('ev_b', 'ev_a')).toBe(true);
    expect(g.keptApart('ev_a', 'ev_c')).toBe(false);
    // The pass plans ev_a into ev_c: ev_b may no longer join ev_c, nor ev_c join ev_b.
    g.merged('ev_a', 'ev_c');
    expect(g.keptApart('ev_b', 'ev_c')).toBe(true);
    expect(g.keptApart('ev_c', 'ev_b')).toBe(true);
    // Nor through a chain: ev_c into ev_d, then ev_b with ev_d.
    g.merged('ev_c', 'ev_d');
    expect(g.keptApart('ev_d', 'ev_b')).toBe(true);
    expect(g.keptApart('ev_d', 'ev_e')).toBe(false);
  });

  it('costs nothing when no analyst kept anything apart', () => {
    const g = new ApartGroups([]);
    g.merged('ev_a', 'ev_c');
    expect(g.keptApart('ev_a', 'ev_b')).toBe(false);
  });
});
