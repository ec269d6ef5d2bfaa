/**
 * The union–find table of the connected-component labellings (labelComponents, labelBitRuns):
 * `parent[i]` is i for a root. Unions link the larger root to the smaller, so a root is always the
 * smallest element of its set (Wu, Otoo & Suzuki 2009), and finds halve the path on the way
 * (Tarjan's path halving).
 */

/** Root of element `i`, halving the path on the way. */
export function findRoot(parent: Int32Array, i: number): number {
  while (parent[i] !== i) {
    const g = parent[parent[i]];
    parent[i] = g;
    i = g;
  }
  return i;
}

/** Joins the sets of `a` and `b`, linking the larger root to the smaller; returns the new root. */
export function unionSets(parent: Int32Array, a: number, b: number): number {
  const ra = findRoot(parent, a);
  const rb = findRoot(parent, b);
  if (ra < rb) {
    parent[rb] = ra;
    return ra;
  }
  parent[ra] = rb;
  return rb;
}
