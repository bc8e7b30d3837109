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

/**
 * "did you mean X?" (or "X or Y") for the known names closest to `name`,
 * or undefined when none is close. Every "did you mean" of the program comes
 * from here, so they all read alike.
 */
export function didYouMean(name: string, known: readonly string[]): string | undefined {
  const close = closestNames(name, known);
  return close.length > 0 ? `did you mean ${close.join(' or ')}?` : undefined;
}

/**
 * What to say after an unknown name: "did you mean X?" when a known name is
 * close, else the list of known names after `label` ("allowed: a, b, c").
 * Long lists are cut after `shown` names.
 */
export function unknownNameHint(name: string, known: readonly string[], label = 'allowed:', shown = 12): string {
  const close = didYouMean(name, known);
  if (close !== undefined) return close;
  if (known.length === 0) return `${label} (none)`;
  const listed = known.slice(0, shown).join(', ');
  return `${label} ${listed}${known.length > shown ? ', ...' : ''}`;
}
