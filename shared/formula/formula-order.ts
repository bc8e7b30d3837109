/**
 * Order computed parameters so that each comes after every computed
 * parameter its formula reads. Ties keep file order, so the order is the
 * same on every machine. A cycle is reported as the path around it.
 */

export type FormulaOrder =
  | { readonly success: true; readonly order: readonly string[] }
  | { readonly success: false; readonly cycle: readonly string[] };

/**
 * `uses` maps each computed name (in file order) to the names its formula
 * reads; names that are not computed are inputs and impose no order.
 */
export function formulaOrder(uses: ReadonlyMap<string, readonly string[]>): FormulaOrder {
  const order: string[] = [];
  const state = new Map<string, 'visiting' | 'done'>();
  // Depth-first, post-order; the path on the stack is the cycle when a
  // name is met again while still being visited. Depth is at most the number
  // of computed parameters (bounded by the model's parameter count).
  const visit = (name: string, path: string[]): readonly string[] | undefined => {
    const seen = state.get(name);
    if (seen === 'done') return undefined;
    if (seen === 'visiting') return [...path.slice(path.indexOf(name)), name];
    state.set(name, 'visiting');
    path.push(name);
    for (const used of uses.get(name) ?? []) {
      if (!uses.has(used)) continue;
      const cycle = visit(used, path);
      if (cycle !== undefined) return cycle;
    }
    path.pop();
    state.set(name, 'done');
    order.push(name);
    return undefined;
  };
  for (const name of uses.keys()) {
    const cycle = visit(name, []);
    if (cycle !== undefined) return { success: false, cycle };
  }
  return { success: true, order };
}
