/**
 * Colour arithmetic for readable labels, after WCAG 2.x (an open W3C standard): relative luminance
 * of sRGB colours and the contrast ratio between two of them.
 */

/** '#rrggbb' or 'rgb(r, g, b)' as [r, g, b] in 0–255. */
export function parseColour(c: string): [number, number, number] {
  const hex = /^#([0-9a-f]{2})([0-9a-f]{2})([0-9a-f]{2})$/i.exec(c.trim());
  if (hex) return [parseInt(hex[1], 16), parseInt(hex[2], 16), parseInt(hex[3], 16)];
  const rgb = /^rgb\(\s*(\d+(?:\.\d+)?)\s*,\s*(\d+(?:\.\d+)?)\s*,\s*(\d+(?:\.\d+)?)\s*\)$/i.exec(c.trim());
  if (rgb) return [Number(rgb[1]), Number(rgb[2]), Number(rgb[3])];
  throw new Error(`not a colour: ${c}`);
}

/** WCAG 2.x relative luminance: 0 for black, 1 for white. */
export function relativeLuminance(c: string): number {
  const [r, g, b] = parseColour(c).map((v) => {
    const s = v / 255;
    return s <= 0.04045 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4;
  });
  return 0.2126 * r + 0.7152 * g + 0.0722 * b;
}

/** WCAG 2.x contrast ratio, from 1 (same luminance) to 21 (black on white). */
export function contrastRatio(a: string, b: string): number {
  const [hi, lo] = [relativeLuminance(a), relativeLuminance(b)].sort((x, y) => y - x);
  return (hi + 0.05) / (lo + 0.05);
}

/** The colour t of the way from a to b (0 ≤ t ≤ 1), interpolated in sRGB, as '#rrggbb'. */
export function mix(a: string, b: string, t: number): string {
  const [p, q] = [parseColour(a), parseColour(b)];
  const u = Math.min(1, Math.max(0, t));
  return '#' + p.map((v, i) => Math.round(v + (q[i] - v) * u).toString(16).padStart(2, '0')).join('');
}

/**
 * Black or white, whichever contrasts more with the background. One of them always reaches at
 * least 4.58:1 (the worst case, a background of luminance √0.0525 − 0.05, is 4.58 from both), so
 * labels chosen this way pass the 4.5:1 of WCAG 2.x level AA on any background.
 */
export function readableInk(background: string): '#000000' | '#ffffff' {
  return contrastRatio(background, '#000000') >= contrastRatio(background, '#ffffff') ? '#000000' : '#ffffff';
}
