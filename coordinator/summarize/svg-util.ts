/** Escape text for XML content and attribute values. */
export function escapeXml(text: string): string {
  return text.replace(/[&<>"']/g, (c) =>
    c === '&' ? '&amp;' : c === '<' ? '&lt;' : c === '>' ? '&gt;' : c === '"' ? '&quot;' : '&#39;',
  );
}

/** Pixel coordinates with two decimals: enough for print, short files. */
export function px(value: number): string {
  return String(Math.round(value * 100) / 100);
}

/**
 * One generic family: every SVG consumer (browsers, resvg) maps it to an
 * installed sans-serif font, so no font file or network fetch is needed.
 */
export const FONT_FAMILY = 'sans-serif';

/** Rough text width for layout (average glyph width of a sans-serif font). */
export function textWidth(text: string, fontSize: number): number {
  return text.length * fontSize * 0.58;
}
