/**
 * `stepwell report NOTEBOOK.ipynb --out FILE.html|FILE.md [--cell N]`: a standalone report per
 * stepwell cell — verification, figures, branches with their changes, findings with sources,
 * recipes, spec, fingerprints and provenance. HTML is one self-contained file (inline SVG and
 * CSS, no script, no network); markdown writes its figures as SVG files into `<name>_files/`
 * beside it. The report always verifies first (the same replay as `stepwell verify`) and
 * says the verdict; it exits 0 once written, whatever the verdict (`verify` is the gate).
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { basename, dirname, extname, join } from 'node:path';
import { CliError, type CommandResult } from './io';
import { reportCell } from './report-model';
import { reportHtml } from './report-html';
import { reportMarkdown } from './report-md';
import { verifyNotebook, type VerifyFlags } from './verify';

/** Flags of `report`. */
export interface ReportFlags extends Pick<VerifyFlags, 'cell' | 'max-updates'> {
  out?: string;
}

function write(path: string, content: string): void {
  try {
    writeFileSync(path, content);
  } catch (e) {
    throw new CliError(`cannot write '${path}': ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`);
  }
}

/** Runs the command: writes the report, prints where and the verdict. */
export function reportCommand(path: string, flags: ReportFlags): CommandResult {
  const out = flags.out;
  if (out === undefined) throw new CliError('report needs --out FILE.html (one standalone page) or --out FILE.md (markdown, figures as SVG files beside it)');
  const ext = extname(out).toLowerCase();
  if (ext !== '.html' && ext !== '.htm' && ext !== '.md') throw new CliError(`--out ${out}: a report is written as .html or .md`);
  const { result, works, notebook, cells: chosen } = verifyNotebook(path, flags);
  const cells = works.map((w, i) => reportCell(notebook, chosen[i], w));
  const generated = new Date().toISOString().replace(/\.\d+Z$/, 'Z');
  const written: string[] = [out];
  if (ext === '.md') {
    const dirName = `${basename(out, extname(out))}_files`;
    const figures = cells.flatMap((c) => c.figures);
    if (figures.length > 0) {
      const dir = join(dirname(out), dirName);
      try {
        mkdirSync(dir, { recursive: true });
      } catch (e) {
        throw new CliError(`cannot make the figure folder '${dir}': ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`);
      }
      for (const f of figures) {
        write(join(dir, `${f.name}.svg`), `<?xml version="1.0" encoding="UTF-8"?>\n${f.svg}\n`);
        written.push(join(dir, `${f.name}.svg`));
      }
    }
    write(out, reportMarkdown(result, cells, generated, dirName));
  } else {
    write(out, reportHtml(result, cells, generated));
  }
  const n = cells.reduce((a, c) => a + c.figures.length, 0);
  return { out: `wrote ${out}${written.length > 1 ? ` and ${written.length - 1} figure file${written.length > 2 ? 's' : ''}` : ''}: ${cells.length} cell${cells.length === 1 ? '' : 's'}, ${n} figure${n === 1 ? '' : 's'}; verification: ${result.verdict}\n`, warnings: [], code: 0 };
}
