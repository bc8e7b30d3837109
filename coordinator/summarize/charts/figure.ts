import { escapeXml } from '../svg-util.js';

/** A file-name-safe piece of text. */
export function slug(text: string): string {
  return (
    text
      .replace(/[^A-Za-z0-9._-]+/g, '_')
      .replace(/^_+|_+$/g, '')
      .slice(0, 60) || 'x'
  );
}

/** One diagram on the page: the inline SVG (or a note in its place), its caption and its files. */
export function diagramFigure(input: {
  readonly id: string;
  /** Inline SVG, or null when the panel is replaced by words saying why. */
  readonly svg: string | null;
  readonly caption: string;
  readonly files: readonly string[];
  readonly data: Readonly<Record<string, number | string>>;
}): string {
  const e = escapeXml;
  const links = input.files.map((f) => `<a href="${e(f)}">${e(f)}</a>`).join(', ');
  const data = Object.entries(input.data)
    .map(([k, v]) => ` data-${k}="${e(String(v))}"`)
    .join('');
  return [
    `<figure id="figure-${e(input.id)}"${data}>`,
    ...(input.svg === null ? [] : [input.svg]),
    `<figcaption>${e(input.caption)}${links === '' ? '' : ` Files: ${links}.`}</figcaption></figure>`,
  ].join('\n');
}

/** The diagrams' section of the page. */
export function diagramSection(figures: readonly string[]): string {
  return [
    '<h2 id="diagrams">Phase diagrams</h2>',
    ...(figures.length === 0 ? ['<p>No diagram: the sweep varies no parameter.</p>'] : figures),
  ].join('\n');
}
