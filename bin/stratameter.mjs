#!/usr/bin/env node
// The command line. It runs the plain-JavaScript build of src/cli/ (bin/cli-build.mjs makes it
// on the first run after an install or a change of the sources, in node_modules/.cache), so no
// TypeScript is transpiled at start-up. STRATAMETER_FROM_SOURCE=1 runs the sources through tsx
// instead, as does a machine where the build cannot be written (with a note saying so).
let entry;
if (process.env.STRATAMETER_FROM_SOURCE !== '1') {
  try {
    const { ensureCli } = await import('./cli-build.mjs');
    entry = await ensureCli();
  } catch (e) {
    process.stderr.write(`stratameter: running from the TypeScript sources (slower start), since the command line could not be built: ${e?.message ?? e}\n`);
  }
}
let main;
if (entry) {
  const { pathToFileURL } = await import('node:url');
  ({ main } = await import(pathToFileURL(entry).href));
} else {
  const { register } = await import('tsx/esm/api');
  register();
  ({ main } = await import('../src/cli/main.ts'));
}
process.exitCode = await main(process.argv.slice(2));
