/**
 * Runs the bundled replay script (`entry.ts`) in four JavaScript engines and returns what each
 * printed: Node's V8 (a fresh `vm` context), headless Chromium (a newer V8, Debian's
 * `/usr/bin/chromium` through playwright-core), SpiderMonkey (the `js102` shell of Debian's
 * `libmozjs-102-dev`) and QuickJS (compiled to WebAssembly, npm `quickjs-emscripten`).
 * Every engine evaluates the same script bytes and gets the same input text.
 */
import { spawnSync } from 'child_process';
import * as fs from 'fs';
import * as os from 'os';
import * as path from 'path';
import * as vm from 'vm';
import * as esbuild from 'esbuild';
import { chromium } from 'playwright-core';
import { CHROMIUM, CHROMIUM_ARGS } from '../../e2e/harness';

/** The engines the replay runs in. */
export type EngineName = 'node' | 'chromium' | 'spidermonkey' | 'quickjs';
export const ENGINES: readonly EngineName[] = ['node', 'chromium', 'spidermonkey', 'quickjs'];

/** SpiderMonkey's shell from Debian's libmozjs-102-dev. */
export const SPIDERMONKEY = process.env.STEPWELL_JS_SHELL || '/usr/bin/js102';

/** An engine's output: the text the script returned, the engine's version and the wall time. */
export interface EngineRun {
  engine: EngineName;
  version: string;
  output: string;
  ms: number;
}

/** Bundles `entry.ts` with core into one self-contained script (no imports, no host API). */
export async function bundleReplayScript(): Promise<string> {
  const r = await esbuild.build({
    entryPoints: [path.join(__dirname, 'entry.ts')],
    bundle: true,
    format: 'iife',
    platform: 'neutral',
    mainFields: ['main', 'module'],
    target: 'es2020',
    write: false,
    logLevel: 'silent',
  });
  return r.outputFiles[0].text;
}

/** Why an engine cannot run here, with how to get it; null when it can. */
export function missingEngine(engine: EngineName): string | null {
  if (engine === 'chromium' && !fs.existsSync(CHROMIUM)) return `Chromium not found at ${CHROMIUM}: apt-get install chromium (or set STEPWELL_CHROMIUM)`;
  if (engine === 'spidermonkey' && !fs.existsSync(SPIDERMONKEY)) return `SpiderMonkey shell not found at ${SPIDERMONKEY}: apt-get install libmozjs-102-dev (or set STEPWELL_JS_SHELL)`;
  return null;
}

/** Runs `script` then `stepwellEngineReplay(input)` in one engine. */
export async function runIn(engine: EngineName, script: string, input: string): Promise<EngineRun> {
  const t0 = performance.now();
  const done = (version: string, output: string): EngineRun => ({ engine, version, output, ms: performance.now() - t0 });
  switch (engine) {
    case 'node': {
      const ctx = vm.createContext({});
      vm.runInContext(script, ctx);
      const fn = (ctx as { stepwellEngineReplay: (s: string) => string }).stepwellEngineReplay;
      return done(`Node ${process.version} (V8 ${process.versions.v8})`, fn(input));
    }
    case 'chromium': {
      const browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
      try {
        const page = await browser.newPage();
        await page.addScriptTag({ content: script });
        const out = await page.evaluate((text) => (globalThis as unknown as { stepwellEngineReplay: (s: string) => string }).stepwellEngineReplay(text), input);
        return done(`Chromium ${browser.version()}`, out);
      } finally {
        await browser.close();
      }
    }
    case 'spidermonkey':
    case 'quickjs': {
      const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'stepwell-engines-'));
      try {
        const scriptFile = path.join(dir, 'replay.js');
        const inputFile = path.join(dir, 'input.json');
        fs.writeFileSync(scriptFile, script);
        fs.writeFileSync(inputFile, input);
        let command: string[];
        let version: string;
        if (engine === 'spidermonkey') {
          const driver = path.join(dir, 'driver.js');
          fs.writeFileSync(driver, `load(${JSON.stringify(scriptFile)});\nputstr(stepwellEngineReplay(read(${JSON.stringify(inputFile)})));\n`);
          command = [SPIDERMONKEY, driver];
          version = `SpiderMonkey ${spawnSync(SPIDERMONKEY, ['--version'], { encoding: 'utf8' }).stdout.trim()}`;
        } else {
          command = [process.execPath, path.join(__dirname, 'quickjs-driver.cjs'), scriptFile, inputFile];
          version = `QuickJS (npm quickjs-emscripten ${quickjsVersion()})`;
        }
        const r = spawnSync(command[0], command.slice(1), { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024, timeout: 5 * 60_000 });
        if (r.status !== 0) throw new Error(`${command.join(' ')} exited with ${r.status}: ${r.stderr}`);
        return done(version, r.stdout);
      } finally {
        fs.rmSync(dir, { recursive: true, force: true });
      }
    }
    default: {
      const never: never = engine;
      throw new Error(`unknown engine ${String(never)}`);
    }
  }
}

function quickjsVersion(): string {
  const pkg = JSON.parse(fs.readFileSync(require.resolve('quickjs-emscripten/package.json'), 'utf8')) as { version: string };
  return pkg.version;
}
