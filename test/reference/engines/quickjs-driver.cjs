// Runs a script file and then `stepwellEngineReplay(<input file's text>)` in QuickJS (npm
// quickjs-emscripten, QuickJS compiled to WebAssembly) and writes the returned text to stdout.
// A separate Node process: the WebAssembly module loads by dynamic import, which jest's vm
// sandbox does not allow. Usage: node quickjs-driver.cjs SCRIPT INPUT
const fs = require('fs');
const { getQuickJS } = require('quickjs-emscripten');

async function main() {
  const [scriptFile, inputFile] = process.argv.slice(2);
  const qjs = await getQuickJS();
  const ctx = qjs.newContext();
  try {
    ctx.unwrapResult(ctx.evalCode(fs.readFileSync(scriptFile, 'utf8'), 'replay.js')).dispose();
    const text = ctx.newString(fs.readFileSync(inputFile, 'utf8'));
    ctx.setProp(ctx.global, 'replayInput', text);
    text.dispose();
    const h = ctx.unwrapResult(ctx.evalCode('stepwellEngineReplay(replayInput)', 'call.js'));
    process.stdout.write(ctx.getString(h));
    h.dispose();
  } finally {
    ctx.dispose();
  }
}

main().catch((e) => {
  process.stderr.write(`${e && e.stack ? e.stack : String(e)}\n`);
  process.exitCode = 1;
});
