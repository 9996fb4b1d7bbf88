/**
 * A ledger whose spec names data and weights files opens for display without them (the page has
 * not read the files yet): the checks that need their numbers wait for the engine, and the view
 * lists the files an engine must read to resume. The walk-in cooler demo is such a notebook.
 */
import * as fs from 'fs';
import * as path from 'path';
import { viewLedger } from '../../../src/worker/ledger-view';

const NOTEBOOK = path.join(__dirname, '..', '..', '..', 'demo-notebooks', 'walk-in-cooler', 'walk-in-cooler.ipynb');

describe('opening a ledger that names files, before they are read', () => {
  const nb = JSON.parse(fs.readFileSync(NOTEBOOK, 'utf8')) as { cells: { metadata: Record<string, unknown> }[] };
  const ledger = nb.cells.map((c) => c.metadata.stepwell).find((v) => v !== undefined);

  it('shows the stored branches and names the files to read', () => {
    const r = viewLedger(ledger);
    if (!r.ok) throw new Error(r.message);
    expect(r.view.summary.branches.map((b) => b.name)).toEqual(['main', 'lr=0.1']);
    expect([...r.view.files].sort()).toEqual(['cooler-start.safetensors', 'cooler-week1.csv', 'cooler-week2.csv']);
  });
});
