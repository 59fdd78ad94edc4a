/**
 * Saving a file from the page: a download of text or bytes under a chosen name (a blob: URL on a
 * temporary link). Browser plumbing, no computation.
 */

/**
 * @param name the file name offered
 * @param data the content
 * @param type its media type (e.g. 'text/csv')
 */
export function download(name: string, data: Uint8Array | string, type: string): void {
  const blob = new Blob([data as BlobPart], { type });
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  a.click();
  setTimeout(() => URL.revokeObjectURL(url), 60_000);
}
