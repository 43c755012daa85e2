import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildCli, root, type BuiltCli } from '../helpers/built-cli.js';
import { historyProposal, momentsProposal } from '../helpers/proposals.js';

// Runs the built CLI (the JavaScript the package ships, built from the current source) as a
// whole process, to check exit codes and streams.
let cli: BuiltCli;
beforeAll(async () => {
  cli = await buildCli();
});
afterAll(() => cli?.remove());
function wobble(args: string[], input?: string) {
  return cli.run(args, { input });
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
    for (const c of ['validate', 'optimize', 'stress', 'check', 'render', 'demo']) {
      const r = wobble([c, '--help']);
      expect(r.code, c).toBe(0);
      expect(r.stdout, c).toContain(`wobble ${c}`);
      expect(r.stdout, c).toContain('3  internal error');
    }
  });

  it('--help and --version, with exit codes documented; no command is a usage error', () => {
    const help = wobble(['--help']);
    expect(help.code).toBe(0);
    expect(help.stdout).toMatch(/0 {2}success[\s\S]*1 {2}check: a gate rule failed[\s\S]*2 {2}input or usage error[\s\S]*3 {2}internal error/);
    const version = wobble(['--version']);
    expect(version.code).toBe(0);
    expect(version.stdout.trim()).toBe(JSON.parse(readFileSync(`${root}package.json`, 'utf8')).version);
    const none = wobble([]);
    expect(none.code).toBe(2);
    expect(none.stderr).toContain('Usage:');
  });

  it('an option that does not apply to the command, or is unknown, is exit 2 with a one-line hint', () => {
    const demo = JSON.stringify(momentsProposal());
    const inapplicable = wobble(['stress', '-', '--policy', 'x.json'], demo);
    expect(inapplicable.code).toBe(2);
    expect(inapplicable.stderr.trim().split('\n')).toHaveLength(1);
    expect(inapplicable.stderr).toContain('--policy does not apply to "wobble stress"');
    expect(inapplicable.stderr).toContain('"wobble check"');
    const unknown = wobble(['optimize', '-', '--drawz', '5'], demo);
    expect(unknown.code).toBe(2);
    expect(unknown.stderr.trim().split('\n')).toHaveLength(1);
    expect(unknown.stderr).toContain('unknown option --drawz');
    expect(wobble(['validate', '-', '--format', 'json'], demo).code).toBe(2);
    expect(wobble(['demo', 'extra']).code).toBe(2);
    expect(wobble(['stress', 'a.json', 'b.json']).code).toBe(2);
    expect(wobble(['--frobnicate']).code).toBe(2);
  });

  it.skipIf(!existsSync('/dev/full'))('a failure that is neither the input nor a gate (here: the output device is full) is exit 3', () => {
    const r = wobble(['demo', '--out', '/dev/full']);
    expect(r.code).toBe(3);
    expect(r.stderr).toContain('internal error');
  });

  it('a maxIncrease rule without --baseline is exit 2 before any draw, naming the rule', () => {
    const dir = mkdtempSync(join(tmpdir(), 'wobble-'));
    const policy = join(dir, 'policy.json');
    writeFileSync(policy, JSON.stringify({ rules: [{ metric: 'turnover-from-proposal.p50', max: 1 }, { metric: 'max-weight-sd', maxIncrease: 0.02 }] }));
    const r = wobble(['check', '-', '--policy', policy], JSON.stringify(historyProposal()));
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('rules[1]');
    expect(r.stderr).toContain('--baseline');
  });

  it('check writes several outputs in one run and render turns the saved report into every format', () => {
    const dir = mkdtempSync(join(tmpdir(), 'wobble-'));
    const policy = join(dir, 'policy.json');
    writeFileSync(policy, JSON.stringify({ rules: [{ metric: 'turnover-from-proposal.p50', max: 0 }] }));
    const [junit, markdown, html, report] = ['w.xml', 'w.md', 'w.html', 'r.json'].map((f) => join(dir, f));
    const r = wobble(['check', '-', '--policy', policy, '--draws', '40', '--seed', 'm', '--junit', junit, '--markdown', markdown, '--html', html, '--out', report], JSON.stringify(historyProposal()));
    expect(r.code).toBe(1);
    expect(r.stdout).toBe('');
    expect(readFileSync(junit, 'utf8')).toContain('<failure');
    expect(readFileSync(html, 'utf8')).toContain('<html');
    const saved = JSON.parse(readFileSync(report, 'utf8'));
    expect(saved.verdict.pass).toBe(false);
    // Rendering the saved report gives the same text as the run itself wrote.
    const md = wobble(['render', report, '--format', 'markdown']);
    expect(md.code).toBe(0);
    expect(md.stdout).toBe(readFileSync(markdown, 'utf8'));
    expect(wobble(['render', report, '--format', 'junit']).stdout).toBe(readFileSync(junit, 'utf8'));
    expect(JSON.parse(wobble(['render', '-', '--format', 'json'], readFileSync(report, 'utf8')).stdout)).toEqual(saved);
    expect(wobble(['render', report, '--format', 'table']).stdout).toContain('turnover');
  });

  it('render refuses what is not a report, and JUnit of a report without a verdict (exit 2), writing nothing', () => {
    const dir = mkdtempSync(join(tmpdir(), 'wobble-'));
    const notReport = wobble(['render', '-', '--format', 'markdown'], JSON.stringify(momentsProposal()));
    expect(notReport.code).toBe(2);
    expect(notReport.stderr).toContain('not a wobble report');
    const report = wobble(['stress', '-', '--draws', '20'], JSON.stringify(momentsProposal())).stdout;
    const out = join(dir, 'out.md');
    const r = wobble(['render', '-', '--format', 'markdown', '--junit', join(dir, 'x.xml'), '--out', out], report);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('verdict');
    expect(existsSync(out)).toBe(false);
    expect(existsSync(join(dir, 'x.xml'))).toBe(false);
  });
});
