import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { historyProposal, momentsProposal } from '../helpers/proposals.js';
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

  it('optimize prints JSON or a table', () => {
    const json = wobble(['optimize', '-'], JSON.stringify(momentsProposal()));
    expect(json.code).toBe(0);
    expect(JSON.parse(json.stdout).methods).toHaveLength(6);
    const table = wobble(['optimize', '-', '--format', 'table'], JSON.stringify(momentsProposal()));
    expect(table.stdout).toContain('minimum-variance');
    expect(wobble(['optimize', '-', '--format', 'yaml'], JSON.stringify(momentsProposal())).code).toBe(2);
  });

  it('stress honours --draws and --seed, writes --out, and is deterministic', () => {
    const dir = mkdtempSync(join(tmpdir(), 'wobble-'));
    const out = join(dir, 'r.json');
    const a = wobble(['stress', '-', '--draws', '40', '--seed', 's1', '--out', out], JSON.stringify(historyProposal()));
    expect(a.code).toBe(0);
    const r = JSON.parse(readFileSync(out, 'utf8'));
    expect(r.meta.drawsRequested).toBe(40);
    expect(r.meta.seed).toBe('s1');
    const b = JSON.parse(wobble(['stress', '-', '--draws', '40', '--seed', 's1'], JSON.stringify(historyProposal())).stdout);
    expect({ ...b, meta: { ...b.meta, elapsedMs: 0 } }).toEqual({ ...r, meta: { ...r.meta, elapsedMs: 0 } });
    expect(wobble(['stress', '-', '--draws', 'x'], JSON.stringify(historyProposal())).code).toBe(2);
  });

  it('check exits 0 when the gate passes, 1 when it fails (JUnit on request), 2 for a bad policy', () => {
    const dir = mkdtempSync(join(tmpdir(), 'wobble-'));
    const policy = join(dir, 'policy.json');
    writeFileSync(policy, JSON.stringify({ rules: [{ metric: 'turnover-from-proposal.p50', max: 1 }] }));
    expect(wobble(['check', '-', '--policy', policy, '--draws', '40'], JSON.stringify(historyProposal())).code).toBe(0);
    writeFileSync(policy, JSON.stringify({ rules: [{ metric: 'turnover-from-proposal.p50', max: 0 }] }));
    const fail = wobble(['check', '-', '--policy', policy, '--draws', '40', '--format', 'junit'], JSON.stringify(historyProposal()));
    expect(fail.code).toBe(1);
    expect(fail.stdout).toContain('<testcase');
    expect(fail.stdout).toContain('<failure');
    writeFileSync(policy, JSON.stringify({ rules: [{ metric: 'unknown', max: 0 }] }));
    const bad = wobble(['check', '-', '--policy', policy], JSON.stringify(historyProposal()));
    expect(bad.code).toBe(2);
    expect(bad.stderr).toContain('rules[0].metric');
  });

  it('--help on every command', () => {
    for (const c of ['validate', 'optimize', 'stress', 'check', 'demo']) {
      const r = wobble([c, '--help']);
      expect(r.code, c).toBe(0);
      expect(r.stdout, c).toContain(`wobble ${c}`);
    }
  });
});
