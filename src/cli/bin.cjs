#!/usr/bin/env node
// Entry of the `stepwell` command: loads the TypeScript sources through tsx, so the CLI
// works straight after `npm ci` with no build step.
'use strict';
require('tsx/cjs/api').register();
const { main } = require('./main.ts');
main(process.argv.slice(2), process.stdout, process.stderr).then(
  (code) => { process.exitCode = code; },
  (err) => { process.stderr.write(`stepwell: ${err && err.message ? err.message : String(err)}\n`); process.exitCode = 70; },
);
