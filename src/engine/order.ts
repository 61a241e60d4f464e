/**
 * Dependency order over column ids (STYLE.md habit 3): generic, knows nothing of
 * formulas. Kahn's algorithm; ids left over sit on or behind a cycle, and each
 * cycle is reported as the ids in it, in order.
 */
export function dependencyOrder<Id>(ids: readonly Id[], dependsOn: (id: Id) => readonly Id[]): { order: Id[]; cycles: Id[][] } {
  const known = new Set(ids);
  const indegree = new Map<Id, number>();
  const dependents = new Map<Id, Id[]>();
  for (const id of ids) {
    indegree.set(id, 0);
    dependents.set(id, []);
  }
  for (const id of ids) {
    for (const dep of new Set(dependsOn(id))) {
      if (!known.has(dep)) continue;
      indegree.set(id, indegree.get(id)! + 1);
      dependents.get(dep)!.push(id);
    }
  }
  const ready = ids.filter((id) => indegree.get(id) === 0);
  const order: Id[] = [];
  while (ready.length > 0) {
    const id = ready.shift()!;
    order.push(id);
    for (const next of dependents.get(id)!) {
      const left = indegree.get(next)! - 1;
      indegree.set(next, left);
      if (left === 0) ready.push(next);
    }
  }
  const rest = ids.filter((id) => indegree.get(id)! > 0);
  return { order, cycles: rest.length ? findCycles(rest, dependsOn) : [] };
}

function findCycles<Id>(rest: readonly Id[], dependsOn: (id: Id) => readonly Id[]): Id[][] {
  const inRest = new Set(rest);
  const cycles: Id[][] = [];
  const done = new Set<Id>();
  for (const start of rest) {
    if (done.has(start)) continue;
    // Walk dependencies inside the leftover set until a node repeats.
    const path: Id[] = [];
    const position = new Map<Id, number>();
    let cur: Id | undefined = start;
    while (cur !== undefined && !position.has(cur) && !done.has(cur)) {
      position.set(cur, path.length);
      path.push(cur);
      cur = dependsOn(cur).find((d) => inRest.has(d));
    }
    if (cur !== undefined && position.has(cur)) cycles.push(path.slice(position.get(cur)!));
    for (const id of path) done.add(id);
  }
  return cycles;
}
