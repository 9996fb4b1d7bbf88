// Makes the README's two commands work on a fresh clone: installs the npm dependencies when
// node_modules is missing or does not match package-lock.json, with --chromium Debian's chromium
// (browser tests, four-engine replay) and with --js-shell Debian's libmozjs-102-dev (its `js102`
// SpiderMonkey shell runs the four-engine replay) when they are missing. Uses Node built-ins
// only, since it runs before anything is installed.
//
//   node src/host/ensure-deps.mjs [--chromium] [--js-shell]
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { ROOT } from './paths.mjs';

const STAMP = path.join(ROOT, 'node_modules', '.stepwell-lock-sha256');

function say(text) {
  console.error(`stepwell: ${text}`);
}

/** SHA-256 of package-lock.json: the stamp an install leaves behind. */
function lockHash() {
  return createHash('sha256').update(fs.readFileSync(path.join(ROOT, 'package-lock.json'))).digest('hex');
}

/**
 * Why node_modules does not match the lockfile, or null when it does. Without our stamp (an
 * install made by hand) every package the lockfile places directly under node_modules/ must be
 * there at the locked version.
 */
function staleReason(hash) {
  if (!fs.existsSync(path.join(ROOT, 'node_modules'))) return 'node_modules is missing';
  if (fs.existsSync(STAMP)) return fs.readFileSync(STAMP, 'utf8').trim() === hash ? null : 'package-lock.json changed since the last install';
  const lock = JSON.parse(fs.readFileSync(path.join(ROOT, 'package-lock.json'), 'utf8'));
  for (const [where, entry] of Object.entries(lock.packages ?? {})) {
    if (!where.startsWith('node_modules/') || where.indexOf('/node_modules/', 1) >= 0 || entry.optional || entry.link) continue;
    const manifest = path.join(ROOT, where, 'package.json');
    if (!fs.existsSync(manifest)) return `${where.slice('node_modules/'.length)} is not installed`;
    const version = JSON.parse(fs.readFileSync(manifest, 'utf8')).version;
    if (entry.version !== undefined && version !== entry.version) return `${where.slice('node_modules/'.length)} is ${version}, the lockfile wants ${entry.version}`;
  }
  return null;
}

/** Runs `npm ci` when node_modules is missing or stale; leaves a stamp so the next check is instant. */
export function ensureDependencies() {
  const hash = lockHash();
  const reason = staleReason(hash);
  if (reason === null) {
    if (!fs.existsSync(STAMP)) fs.writeFileSync(STAMP, hash + '\n');
    return;
  }
  say(`${reason}: running npm ci (about half a minute)`);
  const r = spawnSync('npm', ['ci', '--no-audit', '--no-fund'], { cwd: ROOT, stdio: 'inherit' });
  if (r.status !== 0) throw new Error(`npm ci failed (exit ${r.status}); run it by hand in ${ROOT} to see why`);
  fs.writeFileSync(STAMP, hash + '\n');
}

/**
 * Installs Debian packages with apt-get (as root, or through `sudo -n`) unless `binary` exists;
 * `envName` names the variable that points at another binary instead.
 */
function ensureDebian(binary, envName, packages, why) {
  const wanted = process.env[envName] || binary;
  if (fs.existsSync(wanted)) return;
  if (process.env[envName]) throw new Error(`${envName} names ${wanted}, which does not exist`);
  const root = typeof process.getuid === 'function' && process.getuid() === 0;
  const run = (args) => spawnSync(root ? args[0] : 'sudo', root ? args.slice(1) : ['-n', ...args], { stdio: 'inherit', env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' } });
  say(`${why} need Debian ${packages[0]}: installing it with apt-get`);
  const ok = run(['apt-get', 'update']).status === 0 && run(['apt-get', 'install', '-y', '--no-install-recommends', ...packages]).status === 0;
  if (!ok || !fs.existsSync(wanted)) {
    throw new Error(`could not install ${packages[0]}; install it with \`sudo apt-get install ${packages[0]}\` (Debian) or set ${envName} to the binary`);
  }
}

/** Installs Debian's chromium (and a font for readable screenshots) when the browser tests would not find it. */
export function ensureChromium() {
  ensureDebian('/usr/bin/chromium', 'STEPWELL_CHROMIUM', ['chromium', 'fonts-dejavu-core'], 'the browser tests and the four-engine replay');
}

/** Installs Debian's libmozjs-102-dev (the `js102` SpiderMonkey shell) when the four-engine replay would not find it. */
export function ensureSpiderMonkey() {
  ensureDebian('/usr/bin/js102', 'STEPWELL_JS_SHELL', ['libmozjs-102-dev'], 'the four-engine replay test (SpiderMonkey shell js102)');
}

if (import.meta.url === `file://${process.argv[1]}`) {
  try {
    ensureDependencies();
    if (process.argv.includes('--chromium')) ensureChromium();
    if (process.argv.includes('--js-shell')) ensureSpiderMonkey();
  } catch (err) {
    say(err.message);
    process.exit(1);
  }
}
