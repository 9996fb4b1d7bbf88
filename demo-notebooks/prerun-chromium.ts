/**
 * The Node side of the demo pre-runs, shared by every demo generator: bundles `prerun.ts` (the
 * browser side) and runs its requests in headless Chromium, so the stored ledgers carry the bits
 * the browser computes.
 */
import * as path from 'path';
import * as esbuild from 'esbuild';
import { chromium } from 'playwright-core';
import { CHROMIUM, CHROMIUM_ARGS } from '../test/e2e/harness';
import type { PrerunRequest, PrerunResult } from './prerun';

/** Bundles prerun.ts and runs the requests in headless Chromium; one result per request. */
export async function prerunInChromium(requests: PrerunRequest[]): Promise<PrerunResult[]> {
  const bundle = await esbuild.build({ entryPoints: [path.join(__dirname, 'prerun.ts')], bundle: true, format: 'iife', platform: 'browser', write: false, logLevel: 'silent' });
  const browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  try {
    const page = await browser.newPage();
    await page.addScriptTag({ content: bundle.outputFiles[0].text });
    const results = (await page.evaluate(`stepwellPrerun(${JSON.stringify(requests)})`)) as PrerunResult[];
    console.log(`pre-ran ${results.length} cell${results.length === 1 ? '' : 's'} in Chromium ${browser.version()}`);
    return results;
  } finally {
    await browser.close();
  }
}
