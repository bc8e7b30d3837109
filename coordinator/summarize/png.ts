import { Resvg } from '@resvg/resvg-js';

/**
 * Render an SVG to PNG at the size the SVG declares (1 SVG unit = 1 pixel).
 * System fonts are loaded so the generic `sans-serif` family resolves to an
 * installed font; on a machine without any font the text would be missing
 * (Debian: `apt-get install fonts-dejavu-core`).
 */
export function svgToPng(svg: string): Buffer {
  const resvg = new Resvg(svg, {
    fitTo: { mode: 'original' },
    background: '#ffffff',
    font: { loadSystemFonts: true, sansSerifFamily: 'DejaVu Sans', defaultFontFamily: 'DejaVu Sans' },
  });
  return Buffer.from(resvg.render().asPng());
}
