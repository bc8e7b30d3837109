/** Levenshtein distance, for "did you mean" hints. */
export function editDistance(a: string, b: string): number {
  const prev = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    let diagonal = prev[0]!;
    prev[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const above = prev[j]!;
      prev[j] = Math.min(above + 1, prev[j - 1]! + 1, diagonal + (a[i - 1] === b[j - 1] ? 0 : 1));
      diagonal = above;
    }
  }
  return prev[b.length]!;
}

/** Names longer than this get no hint: no known name is that long, and the distance costs length squared. */
const LONGEST_HINTED = 100;

/** Up to `limit` known names closest to `name` (case-insensitive edit distance). */
export function closestNames(name: string, known: readonly string[], limit = 3): string[] {
  if (name.length > LONGEST_HINTED) return [];
  const lower = name.toLowerCase();
  return known
    .map((k) => {
      const kl = k.toLowerCase();
      const d = editDistance(lower, kl);
      const related = kl.includes(lower) || lower.includes(kl);
      return { k, score: related ? Math.min(d, 1) : d };
    })
    .filter((c) => c.score <= Math.max(2, Math.floor(name.length / 3)))
    .sort((x, y) => x.score - y.score || x.k.localeCompare(y.k))
    .slice(0, limit)
    .map((c) => c.k);
}
