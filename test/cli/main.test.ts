import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';

// Runs the CLI as a user does (npm run -s wobble -- …) to check exit codes and streams.
const root = new URL('../..', import.meta.url).pathname;
function wobble(args: string[], input?: string) {
  const r = spawnSync(process.execPath, ['--import', 'tsx', 'src/cli/main.ts', ...args], { cwd: root, input, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

describe('wobble CLI', () => {
  it('demo prints the demo proposal', () => {
    const r = wobble(['demo']);
    expect(r.code).toBe(0);
    expect(JSON.parse(r.stdout)).toEqual(JSON.parse(readFileSync(`${root}schemas/examples/demo-proposal.json`, 'utf8')));
  });

  it('validate exits 0 on the demo and 2 with the path on a malformed proposal (stdin)', () => {
    expect(wobble(['validate', 'schemas/examples/demo-proposal.json']).code).toBe(0);
    const demo = JSON.parse(readFileSync(`${root}schemas/examples/demo-proposal.json`, 'utf8'));
    const r = wobble(['validate', '-'], JSON.stringify({ ...demo, weights: demo.weights.slice(1) }));
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/^weights: expected 10 numbers/m);
  });

  it('exit 2 for usage errors: unknown command, missing file, bad JSON, unknown option', () => {
    expect(wobble(['frobnicate']).code).toBe(2);
    expect(wobble(['validate', 'no-such-file.json']).code).toBe(2);
    expect(wobble(['validate', '-'], '{not json').code).toBe(2);
    expect(wobble(['validate', '--bogus']).code).toBe(2);
  });

  it('--help on every command', () => {
    for (const c of ['validate', 'optimize', 'stress', 'check', 'demo']) {
      const r = wobble([c, '--help']);
      expect(r.code, c).toBe(0);
      expect(r.stdout, c).toContain(`wobble ${c}`);
    }
  });
});
