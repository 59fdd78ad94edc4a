// Text for SVG and XML documents. A module of its own, so the plots (which need only this) do not
// load the raster figures' PNG encoder.

/**
 * Escapes text for an SVG or XML document.
 * @param s the text
 * @returns the text with & < > " written as entities (XML 1.0 §2.4)
 */
export function escapeXml(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}
