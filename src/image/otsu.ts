/** Otsu's threshold: one grey level that splits a picture into two classes. */

/**
 * Otsu's threshold of 8-bit grey values: the level maximising the between-class variance.
 * @param data grey values 0–255
 * @returns the threshold t; pixels > t are the bright class
 * Notes: Otsu, IEEE Trans. Syst. Man Cybern. 9(1), 62–66 (1979).
 */
export function otsuThreshold(data: Uint8Array): number {
  if (!(data instanceof Uint8Array) || data.length === 0) throw new TypeError('data must be a non-empty Uint8Array');
  const hist = new Float64Array(256);
  for (let i = 0; i < data.length; i++) hist[data[i]]++;
  let sumAll = 0;
  for (let i = 0; i < 256; i++) sumAll += i * hist[i];
  let w0 = 0;
  let sum0 = 0;
  let best = 0;
  let bestVar = -1;
  for (let t = 0; t < 256; t++) {
    w0 += hist[t];
    if (w0 === 0) continue;
    const w1 = data.length - w0;
    if (w1 === 0) break;
    sum0 += t * hist[t];
    const m0 = sum0 / w0;
    const m1 = (sumAll - sum0) / w1;
    const between = w0 * w1 * (m0 - m1) ** 2;
    if (between > bestVar) {
      bestVar = between;
      best = t;
    }
  }
  return best;
}
