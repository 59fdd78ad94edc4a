/**
 * A stand-alone SVG document rendered to PNG bytes in the page (an image from a blob: URL drawn
 * on a canvas), so that every SVG figure of an export also comes as a raster for slides and
 * word processors.
 */

/**
 * @param svgText an SVG document with width and height attributes
 * @param scale device pixels per SVG unit (default 2, for print)
 * @returns PNG file bytes
 */
export async function svgToPng(svgText: string, scale = 2): Promise<Uint8Array> {
  if (!(scale > 0 && scale <= 8)) throw new RangeError(`scale must be in (0, 8], got ${scale}`);
  const url = URL.createObjectURL(new Blob([svgText], { type: 'image/svg+xml' }));
  try {
    const img = new Image();
    img.src = url;
    await img.decode();
    const canvas = document.createElement('canvas');
    canvas.width = Math.round(img.naturalWidth * scale);
    canvas.height = Math.round(img.naturalHeight * scale);
    const ctx = canvas.getContext('2d');
    if (!ctx) throw new Error('no 2D canvas in this browser');
    ctx.drawImage(img, 0, 0, canvas.width, canvas.height);
    const png = await new Promise<Blob | null>((resolve) => canvas.toBlob(resolve, 'image/png'));
    if (!png) throw new Error('the browser could not encode the PNG');
    return new Uint8Array(await png.arrayBuffer());
  } finally {
    URL.revokeObjectURL(url);
  }
}
