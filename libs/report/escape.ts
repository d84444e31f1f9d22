/**
 * Escaping for text placed in HTML and SVG. Sensor ids and messages come from the input feed, so
 * everything that did not come from our own code goes through these before it reaches the page.
 */
const HTML_ESCAPES: Record<string, string> = {
  '&': '&amp;',
  '<': '&lt;',
  '>': '&gt;',
  '"': '&quot;',
  "'": '&#39;',
};

/** Safe for element text and for quoted attribute values (double or single quotes). */
export function esc(text: unknown): string {
  return String(text).replace(/[&<>"']/g, (c) => HTML_ESCAPES[c]);
}

/** A finite number formatted for SVG coordinates (2 decimals is sub-pixel; NaN never reaches the page). */
export function coord(value: number): string {
  if (!Number.isFinite(value)) return '0';
  return (Math.round(value * 100) / 100).toString();
}
