/**
 * The program's version, as `package.json` gives it (a test keeps the two equal). Partial results
 * of a sharded batch carry it, and `merge` refuses to combine partial results of different versions.
 */
export const PROGRAM_VERSION = '0.1.0';
