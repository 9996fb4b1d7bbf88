/** "About Stepwell" shows Stepwell's own version (package.json's) and names its documentation files, which exist. */
import * as fs from 'fs';
import * as path from 'path';
import { ABOUT_DOCS, ABOUT_TEXT, STEPWELL_VERSION } from '../../../src/ui/about';

const ROOT = path.resolve(__dirname, '..', '..', '..');

describe('About Stepwell', () => {
  it('states the version package.json gives', () => {
    expect(STEPWELL_VERSION).toBe(JSON.parse(fs.readFileSync(path.join(ROOT, 'package.json'), 'utf8')).version);
  });

  it('links to documentation files that exist and says what Stepwell is', () => {
    expect(ABOUT_DOCS.map(d => d.file)).toEqual(['README.md', 'DEVELOPERS.md']);
    for (const d of ABOUT_DOCS) expect(fs.existsSync(path.join(ROOT, d.file))).toBe(true);
    expect(ABOUT_TEXT).toMatch(/^Stepwell steps one small neural-network experiment/);
  });
});
