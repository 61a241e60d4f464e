/** Add `item` to the list kept under `key`, starting the list when it is the first. */
export function pushTo<K, T>(groups: Map<K, T[]>, key: K, item: T): void {
  const list = groups.get(key);
  if (list) list.push(item);
  else groups.set(key, [item]);
}

/** The items grouped by `key`, each group in the items' order. */
export function groupBy<K, T>(items: Iterable<T>, key: (item: T) => K): Map<K, T[]> {
  const groups = new Map<K, T[]>();
  for (const item of items) pushTo(groups, key(item), item);
  return groups;
}
