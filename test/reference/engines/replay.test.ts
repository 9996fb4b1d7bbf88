/**
 * Replays the same experiments in four JavaScript engines — Node's V8, headless Chromium,
 * SpiderMonkey and QuickJS — from one bundled script and requires the same state fingerprint
 * and step-record fingerprint after every update. This is the outside check that core's
 * arithmetic does not depend on the engine: the engines are independent implementations
 * (source: the engines themselves — V8 in Node 20 and in Chromium, SpiderMonkey 102 from
 * Debian's libmozjs-102-dev, QuickJS from npm quickjs-emscripten).
 *
 * A missing engine fails the test with how to install it: it never skips.
 */
import { ENGINE_CASES, caseExperiment } from './cases';
import type { CaseTrace } from './entry';
import { bundleReplayScript, ENGINES, missingEngine, runIn, type EngineName, type EngineRun } from './engines';
import { engineMathUses } from './scan';

jest.setTimeout(240_000);

/** Float64Arrays as number lists, so the experiment travels as plain JSON. */
const plain = (v: unknown): unknown => JSON.parse(JSON.stringify(v, (_k, x: unknown) => (x instanceof Float64Array ? Array.from(x) : x)));

let script = '';
let input = '';
const runs = new Map<EngineName, EngineRun>();

beforeAll(async () => {
  script = await bundleReplayScript();
  input = JSON.stringify(ENGINE_CASES.map((c) => ({ name: c.name, steps: c.steps, experiment: plain(caseExperiment(c)) })));
});

afterAll(() => {
  const lines = [...runs.values()].map((r) => `  ${r.engine.padEnd(12)} ${(r.ms / 1000).toFixed(1).padStart(5)} s  ${r.version}`);
  if (lines.length > 0) console.log(`four-engine replay of ${ENGINE_CASES.length} experiments (script ${script.length} bytes):\n${lines.join('\n')}`);
});

describe('the bundled replay script', () => {
  it('calls engine-dependent Math functions only in ml-matrix element-wise methods that core never calls', () => {
    const uses = engineMathUses(script);
    const outside = uses.filter((u) => u.file !== 'node_modules/ml-matrix/matrix.js');
    expect(outside).toEqual([]);
    // ml-matrix is bundled whole (CommonJS); core uses only Matrix get/set/clone and
    // CholeskyDecomposition (newton.ts), whose code has only Math.sqrt and Math.max.
    const lines = script.split('\n');
    const start = lines.findIndex((l) => /CholeskyDecomposition\d* = class \{/.test(l));
    expect(start).toBeGreaterThan(0);
    const indent = /^ */.exec(lines[start])?.[0] ?? '';
    const end = lines.findIndex((l, i) => i > start && l.startsWith(`${indent}}`));
    expect(end - start).toBeGreaterThan(20); // the whole class body, not an empty match
    expect(uses.filter((u) => u.line > start && u.line <= end + 1)).toEqual([]);
  });
});

describe('four-engine replay', () => {
  it.each(ENGINES.map((e) => [e]))('%s is installed', (engine) => {
    expect(missingEngine(engine)).toBeNull();
  });

  it.each(ENGINES.map((e) => [e]))('runs in %s', async (engine) => {
    const why = missingEngine(engine);
    if (why !== null) throw new Error(why);
    runs.set(engine, await runIn(engine, script, input));
  });

  it('ran the WebAssembly SIMD kernels where the engine has them (V8, SpiderMonkey) and the plain-JavaScript loops in QuickJS', () => {
    // The bits below are compared across these two paths: the SIMD kernels must match the loops.
    const kinds = new Map([...runs].map(([e, r]) => [e, new Set((JSON.parse(r.output) as CaseTrace[]).map((t) => t.kernels).filter((k) => k !== 'none'))]));
    expect(kinds.size).toBe(ENGINES.length);
    for (const e of ['node', 'chromium', 'spidermonkey'] as const) expect([...(kinds.get(e) ?? [])]).toEqual(['simd']);
    expect([...(kinds.get('quickjs') ?? [])]).toEqual(['scalar']);
  });

  it('gives identical fingerprints after every update in every engine', () => {
    expect([...runs.keys()].sort()).toEqual([...ENGINES].sort());
    const traces = new Map([...runs].map(([e, r]) => [e, JSON.parse(r.output) as CaseTrace[]]));
    const node = traces.get('node') as CaseTrace[];
    expect(node).toHaveLength(ENGINE_CASES.length);
    ENGINE_CASES.forEach((c, i) => {
      expect(node[i].name).toBe(c.name);
      expect(node[i].states).toHaveLength(c.steps + 1);
      // every update moves the state, so equal lists are not equal by emptiness
      expect(new Set(node[i].states).size).toBe(c.steps + 1);
    });
    const differences: string[] = [];
    for (const [engine, t] of traces) {
      if (engine === 'node') continue;
      expect(t).toHaveLength(node.length);
      t.forEach((trace, i) => {
        const k = trace.states.findIndex((s, j) => s !== node[i].states[j] || trace.records[j] !== node[i].records[j]);
        if (k >= 0 || trace.states.length !== node[i].states.length) differences.push(`${engine}: '${trace.name}' differs from Node at step ${k}`);
      });
    }
    expect(differences).toEqual([]);
  });
});
