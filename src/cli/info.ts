/**
 * `stratameter info IMAGE [--json]`: what the reader makes of an image file — size, pixel type,
 * value range, the pixel size found in its metadata (with source and detail) and any warnings.
 */
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { openImageFile } from './open-image';
import type { GreyImage } from '../image/grey-image';

const usage = `Usage: stratameter info IMAGE [--json] [--reject-nonfinite] [--max-pixels N]

Reads IMAGE (TIFF, PNG, JPEG or MRC) and prints its size, pixel type, value range, the pixel
size found in its metadata and any warnings made while reading.

Options:
  --json                one JSON object on standard output instead of text
  --reject-nonfinite    refuse a file with NaN/infinite pixels (by default they are set to the
                        median of the other pixels, and a warning says how many)
  --max-pixels N        largest image accepted, in pixels (default 268435456 = 16384²)
  --max-decompressed-bytes N
                        most bytes compressed image data may expand to (default 1073741824 = 1 GiB)
`;

/** The JSON shape printed by `info --json`. */
export interface InfoReport {
  file: string;
  /** Image width and height in pixels. */
  widthPx: number;
  heightPx: number;
  bitDepth: number;
  sampleKind: string;
  min: number;
  max: number;
  calibration: { nmPerPx: number; nmPerPxY?: number; source: string; relUncertainty: number; detail: string } | null;
  warnings: string[];
}

/** Builds the report for one decoded image. */
export function infoReport(file: string, image: GreyImage): InfoReport {
  const c = image.calibration;
  return {
    file,
    widthPx: image.width,
    heightPx: image.height,
    bitDepth: image.bitDepth,
    sampleKind: image.sampleKind,
    min: image.min,
    max: image.max,
    calibration: c
      ? {
          nmPerPx: c.nmPerPx,
          ...(c.nmPerPxY !== undefined ? { nmPerPxY: c.nmPerPxY } : {}),
          source: c.source,
          relUncertainty: c.relUncertainty,
          detail: c.detail,
        }
      : null,
    warnings: [...image.warnings],
  };
}

const KIND: Record<string, string> = { uint: 'unsigned integer', int: 'signed integer', float: 'float' };

function sig(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

/** The report as aligned text lines. */
export function formatInfo(r: InfoReport): string {
  const lines = [
    `file         ${r.file}`,
    `size         ${r.widthPx} × ${r.heightPx} pixels`,
    `pixel type   ${r.bitDepth}-bit ${KIND[r.sampleKind] ?? r.sampleKind}`,
    `values       ${sig(r.min)} to ${sig(r.max)}`,
  ];
  const c = r.calibration;
  if (c) {
    const size = c.nmPerPxY !== undefined ? `${sig(c.nmPerPx)} × ${sig(c.nmPerPxY)} nm per pixel (x × y)` : `${sig(c.nmPerPx)} nm per pixel`;
    lines.push(`calibration  ${size}, ±${sig(c.relUncertainty * 100)} % (source: ${c.source})`);
    lines.push(`             ${c.detail}`);
  } else {
    lines.push('calibration  none in the file (set it from a scale bar, a standard or by hand)');
  }
  if (r.warnings.length) {
    lines.push('warnings');
    for (const w of r.warnings) lines.push(`  - ${w}`);
  }
  return lines.join('\n') + '\n';
}

export const command: CliCommand = {
  name: 'info',
  summary: 'size, pixel type, value range and metadata calibration of an image file',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, { values: ['max-pixels', 'max-decompressed-bytes'], booleans: ['json', 'reject-nonfinite'] });
    if (positional.length !== 1) throw new UsageError(`expected one IMAGE file, got ${positional.length} arguments\n${usage}`);
    const file = positional[0];
    let maxPixels: number | undefined;
    if (options.has('max-pixels')) {
      const text = options.get('max-pixels') ?? '';
      maxPixels = Number(text);
      if (!Number.isInteger(maxPixels) || maxPixels < 1) throw new UsageError(`--max-pixels must be a positive integer, got '${text}'`);
    }
    let maxDecompressedBytes: number | undefined;
    if (options.has('max-decompressed-bytes')) {
      const text = options.get('max-decompressed-bytes') ?? '';
      maxDecompressedBytes = Number(text);
      if (!Number.isInteger(maxDecompressedBytes) || maxDecompressedBytes < 1) throw new UsageError(`--max-decompressed-bytes must be a positive integer, got '${text}'`);
    }
    const image = openImageFile(file, { maxPixels, maxDecompressedBytes, nonFinite: flags.has('reject-nonfinite') ? 'reject' : 'replace' });
    const report = infoReport(file, image);
    io.out(flags.has('json') ? JSON.stringify(report, null, 2) + '\n' : formatInfo(report));
    return 0;
  },
};
