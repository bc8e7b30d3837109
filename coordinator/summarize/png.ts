import { Resvg } from '@resvg/resvg-js';

/**
 * Render an SVG to PNG at `scale` pixels per SVG unit (the SVG's declared
 * size times the scale). System fonts are loaded so the generic
 * `sans-serif` family resolves to an installed font; on a machine without
 * any font the text would be missing (Debian: `apt-get install fonts-dejavu-core`).
 */
export function svgToPng(svg: string, scale: number): Buffer {
  const resvg = new Resvg(svg, {
    fitTo: scale === 1 ? { mode: 'original' } : { mode: 'zoom', value: scale },
    background: '#ffffff',
    font: { loadSystemFonts: true, sansSerifFamily: 'DejaVu Sans', defaultFontFamily: 'DejaVu Sans' },
  });
  return Buffer.from(resvg.render().asPng());
}
