// The command line's table of commands and its plain-JavaScript build (bin/cli-build.mjs).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { expect, test } from 'vitest';
import { COMMANDS } from '../../src/cli/main';
import { PROGRAM_VERSION } from '../../src/cli/version';
// @ts-expect-error a plain JavaScript module without types
import { buildCli, sourceFingerprint } from '../../bin/cli-build.mjs';

test('each entry of the command table names its module\'s command and repeats its summary', async () => {
  const names = new Set<string>();
  for (const entry of COMMANDS) {
    const { command } = await entry.load();
    expect(command.name).toBe(entry.name);
    expect(entry.summary).toBe(command.summary);
    names.add(entry.name);
  }
  expect(names.size).toBe(COMMANDS.length);
});

test('the program version is the one package.json gives', () => {
  expect(PROGRAM_VERSION).toBe(JSON.parse(readFileSync('package.json', 'utf8')).version);
});

test('the fingerprint of the sources is 16 hex digits and stable', () => {
  const a = sourceFingerprint();
  expect(a).toMatch(/^[0-9a-f]{16}$/);
  expect(sourceFingerprint()).toBe(a);
});

test('the built command line runs without TypeScript: --version, --help, and a command error', async () => {
  const dir = mkdtempSync(join(tmpdir(), 'stratameter-cli-build-'));
  try {
    // built into the project's cache folder layout (the bundle finds node_modules from there)
    const out = join('node_modules', '.cache', 'stratameter-cli-test', String(process.pid));
    await buildCli(out);
    expect(existsSync(join(out, 'main.mjs'))).toBe(true);
    expect(existsSync(join(out, 'batch-worker.mjs'))).toBe(true);
    const run = (args: string[]) => spawnSync(process.execPath, ['--input-type=module', '-e', `const { main } = await import(${JSON.stringify(join(process.cwd(), out, 'main.mjs'))}); process.exitCode = await main(${JSON.stringify(args)});`], { encoding: 'utf8' });
    const version = run(['--version']);
    expect(version.status).toBe(0);
    expect(version.stdout.trim()).toBe(PROGRAM_VERSION);
    const help = run(['--help']);
    expect(help.status).toBe(0);
    for (const c of COMMANDS) expect(help.stdout).toContain(`  ${c.name}`);
    const bad = run(['info', join(dir, 'missing.tif')]);
    expect(bad.status).toBe(1);
    expect(bad.stderr).toMatch(/stratameter info: .*missing\.tif/);
    rmSync(out, { recursive: true, force: true });
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
});
