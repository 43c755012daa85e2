// Packs this checkout and installs the tarball into a fresh project without the registry: the
// dependency versions and integrity hashes come from the checkout's lockfile (its production
// entries), the tarballs from the npm cache that `npm ci` filled. Used by .ci/install-proof.mjs
// and the start-up benchmark, which both need the package exactly as a user installs it.
import { execFileSync, spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';

/** Returns the pack result (npm pack --json), the tarball path and the project folder. */
export function packAndInstall(root, work) {
  const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8'));
  const packed = JSON.parse(execFileSync('npm', ['pack', '--pack-destination', work, '--json'], { cwd: root, encoding: 'utf8', stdio: ['ignore', 'pipe', 'inherit'] }))[0];
  const tarball = join(work, packed.filename);
  const project = join(work, 'project');
  mkdirSync(project, { recursive: true });
  const spec = `file:${tarball}`;
  writeFileSync(join(project, 'package.json'), JSON.stringify({ name: 'wobble-install-proof', version: '1.0.0', private: true, type: 'module', dependencies: { wobble: spec } }, null, 2));
  const checkoutLock = JSON.parse(readFileSync(join(root, 'package-lock.json'), 'utf8'));
  const production = Object.fromEntries(Object.entries(checkoutLock.packages).filter(([path, entry]) => path !== '' && !entry.dev && !entry.link));
  const integrity = `sha512-${createHash('sha512').update(readFileSync(tarball)).digest('base64')}`;
  const lock = {
    name: 'wobble-install-proof',
    version: '1.0.0',
    lockfileVersion: 3,
    requires: true,
    packages: {
      '': { name: 'wobble-install-proof', version: '1.0.0', dependencies: { wobble: spec } },
      'node_modules/wobble': { version: pkg.version, resolved: spec, integrity, license: pkg.license, dependencies: pkg.dependencies, bin: pkg.bin, engines: pkg.engines },
      ...production,
    },
  };
  writeFileSync(join(project, 'package-lock.json'), JSON.stringify(lock, null, 2));
  const quiet = ['--no-audit', '--no-fund', '--loglevel=error'];
  let install = spawnSync('npm', ['ci', '--offline', ...quiet], { cwd: project, encoding: 'utf8' });
  let offline = true;
  if (install.status !== 0) {
    console.log(`warning: the offline install failed (${install.stderr.trim().split('\n')[0]}); retrying with --prefer-offline`);
    offline = false;
    install = spawnSync('npm', ['install', '--prefer-offline', ...quiet, spec], { cwd: project, encoding: 'utf8' });
  }
  return { packed, tarball, project, pkg, install, offline };
}
