import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildCli, root, type BuiltCli } from '../helpers/built-cli.js';
import { demoProposal } from '../helpers/proposals.js';

// The README's CLI examples are run, so the docs cannot rot: every line of the first sh block of
// its "## CLI" section, in order, in one folder, with the built `wobble` on PATH, each checked
// against the exit code its comment documents (`# exit N`). The policy is the section's JSON block.
const readme = readFileSync(join(root, 'README.md'), 'utf8');
const section = readme.slice(readme.indexOf('\n## CLI\n'), readme.indexOf('\n## ', readme.indexOf('\n## CLI\n') + 5));
const shBlock = /```sh\n([\s\S]*?)```/.exec(section)?.[1] ?? '';
const policyBlock = /```json\n([\s\S]*?)```/.exec(section)?.[1] ?? '';
const examples = shBlock
  .split('\n')
  .filter((line) => line.trim() !== '')
  .map((line) => {
    const hash = line.indexOf(' #');
    return { line, command: (hash < 0 ? line : line.slice(0, hash)).trim(), exit: Number(/#\s*exit (\d)/.exec(line)?.[1] ?? NaN) };
  });

let cli: BuiltCli;
let dir = '';
beforeAll(async () => {
  cli = await buildCli();
  dir = mkdtempSync(join(tmpdir(), 'wobble-readme-'));
  writeFileSync(join(dir, 'policy.json'), policyBlock);
  // The files the section names: the proposal in production and a candidate change to it.
  writeFileSync(join(dir, 'current.json'), JSON.stringify(demoProposal()));
  writeFileSync(join(dir, 'candidate.json'), JSON.stringify({ ...demoProposal(), method: { name: 'mean-variance', riskAversion: 8 } }));
});
afterAll(() => cli?.remove());

describe('README CLI section', () => {
  it('has examples, every one a wobble command with a documented exit code, covering every command', () => {
    expect(examples.length).toBeGreaterThanOrEqual(10);
    for (const e of examples) {
      expect(e.command, e.line).toMatch(/(^|\|\s*)wobble /);
      expect(Number.isInteger(e.exit), `no "# exit N" on: ${e.line}`).toBe(true);
    }
    for (const command of ['validate', 'optimize', 'stress', 'check', 'render', 'demo', '--version', '--help']) {
      expect(examples.some((e) => e.command.includes(` ${command}`) || e.command.startsWith(`wobble ${command}`)), command).toBe(true);
    }
    for (const code of [0, 1, 2]) expect(examples.some((e) => e.exit === code), `an example exiting ${code}`).toBe(true);
    expect(JSON.parse(policyBlock).rules.length).toBeGreaterThan(0);
  });

  it('every example exits as documented, and the files it names are written', () => {
    const env = { ...process.env, PATH: `${cli.binDir}:${process.env.PATH}` };
    for (const e of examples) {
      const r = spawnSync('sh', ['-c', e.command], { cwd: dir, env, encoding: 'utf8' });
      expect(r.status, `${e.command}\n${r.stderr}`).toBe(e.exit);
      for (const m of e.command.matchAll(/(?:>|--out|--junit|--markdown|--html|--json|--table)\s+(\S+)/g)) {
        expect(existsSync(join(dir, m[1])), `${m[1]} written by: ${e.command}`).toBe(true);
      }
    }
    expect(JSON.parse(readFileSync(join(dir, 'demo.json'), 'utf8'))).toEqual(demoProposal());
    expect(readFileSync(join(dir, 'wobble.xml'), 'utf8')).toContain('<failure');
    expect(JSON.parse(readFileSync(join(dir, 'check.json'), 'utf8')).verdict.pass).toBe(false);
  });
});
