import { describe, expect, it } from 'vitest';
import { dependencyOrder } from '../../src/engine/order.js';

const graph = (edges: Record<string, string[]>) => (id: string) => edges[id] ?? [];

describe('dependency order', () => {
  it.each([
    { edges: { a: [], b: ['a'], c: ['b', 'a'] }, ids: ['c', 'b', 'a'], order: ['a', 'b', 'c'] },
    { edges: { x: ['outside'], y: [] }, ids: ['x', 'y'], order: ['x', 'y'] },
    { edges: { p: [], q: [] }, ids: ['q', 'p'], order: ['q', 'p'] },
  ])('orders $ids', ({ edges, ids, order }) => {
    expect(dependencyOrder(ids, graph(edges))).toEqual({ order, cycles: [] });
  });

  it('reports a cycle with the ids in it, leaving the rest ordered', () => {
    const r = dependencyOrder(['a', 'b', 'c', 'd'], graph({ a: ['c'], b: ['a'], c: ['b'], d: [] }));
    expect(r.order).toEqual(['d']);
    expect(r.cycles).toHaveLength(1);
    expect([...r.cycles[0]!].sort()).toEqual(['a', 'b', 'c']);
  });

  it('a column that reads itself is a cycle of one', () => {
    expect(dependencyOrder(['a'], graph({ a: ['a'] })).cycles).toEqual([['a']]);
  });
});
