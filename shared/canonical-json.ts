import { hash } from 'node:crypto';

/**
 * JSON with object keys sorted at every level, so that equal values always
 * give equal text and therefore equal hashes (job keys, sweep hashes).
 * Numbers use JavaScript's shortest round-trip form, which is the same on
 * every machine.
 */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(sortKeys(value));
}

function sortKeys(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(sortKeys);
  if (value !== null && typeof value === 'object') {
    const out: Record<string, unknown> = {};
    for (const key of Object.keys(value).sort()) {
      const v = (value as Record<string, unknown>)[key];
      if (v !== undefined) out[key] = sortKeys(v);
    }
    return out;
  }
  if (typeof value === 'number' && !Number.isFinite(value)) {
    throw new TypeError(`canonicalJson: non-finite number ${String(value)}`);
  }
  return value;
}

/**
 * Lower-case hex SHA-256 of a string (UTF-8). The one-shot `hash` is about
 * three times faster than createHash for short texts, which matters where
 * every stored record's key is checked again.
 */
export function sha256Hex(text: string): string {
  return hash('sha256', text);
}
