/**
 * Reading a cell's files through a contents manager (a stand-in with the calls the reader makes):
 * the size limit is the `maxFileBytes` setting in force at each read and is checked before any
 * content is fetched; a file JupyterLite hands over as text keeps its bytes (a byte-order mark
 * included) when the site's raw copy decodes to that text.
 */
import type { Contents } from '@jupyterlab/services';
import { notebookFileReader, type RawFileFetch } from '../../../src/plugin/notebook-files';

interface StoredFile {
  /** What the manager sends: base64 (a real server), or decoded text (JupyterLite). */
  format: 'base64' | 'text';
  content: string;
  size: number;
}

/** A contents manager over `files`, counting the requests that fetch content. */
function fakeContents(files: Record<string, StoredFile>): { manager: Contents.IManager; contentRequests: string[] } {
  const contentRequests: string[] = [];
  const manager = {
    driveName: () => '',
    localPath: (p: string) => p,
    get: async (path: string, options?: Contents.IFetchOptions) => {
      const f = files[path];
      if (f === undefined) throw Object.assign(new Error('not found'), { response: { status: 404 } });
      if (options?.content !== true) return { type: 'file', format: f.format === 'text' ? 'text' : null, size: f.size, content: null };
      contentRequests.push(path);
      return { type: 'file', format: f.format, size: f.size, content: f.content };
    }
  };
  return { manager: manager as unknown as Contents.IManager, contentRequests };
}

const BOM = [0xef, 0xbb, 0xbf];
const CSV = 'celsius,door\r\n4.5,0\r\n5.25,1\r\n';
const csvBytes = (bom: boolean): Uint8Array => Uint8Array.from([...(bom ? BOM : []), ...Buffer.from(CSV, 'utf8')]);

describe('notebookFileReader', () => {
  it('refuses a file above the maxFileBytes setting before fetching its content, and follows a changed setting', async () => {
    const bytes = Uint8Array.from({ length: 20 }, (_, i) => i);
    const { manager, contentRequests } = fakeContents({ 'lab/start.npy': { format: 'base64', content: Buffer.from(bytes).toString('base64'), size: 20 } });
    let limit = 10;
    const read = notebookFileReader(manager, () => 'lab/study.ipynb', { maxBytes: () => limit });
    const refused = await read(['start.npy']);
    expect(refused.files.size).toBe(0);
    expect(refused.problems.get('start.npy')).toBe("'lab/start.npy' has 20 bytes, above the limit of 10 for a data or weights file (setting maxFileBytes)");
    expect(contentRequests).toEqual([]);
    limit = 20;
    const got = await read(['start.npy']);
    expect(got.problems.size).toBe(0);
    expect(Array.from(got.files.get('start.npy') ?? [])).toEqual(Array.from(bytes));
  });

  it('keeps a CSV with a byte-order mark byte-exact when the site\'s raw copy decodes to the text JupyterLite gave', async () => {
    const raw = csvBytes(true);
    const fetched: string[] = [];
    const rawBytes: RawFileFetch = async (path) => (fetched.push(path), path === 'lab/cooler.csv' ? raw : null);
    // JupyterLite decodes the file with Response.text(), which drops the mark; the index has the file's size
    const { manager } = fakeContents({ 'lab/cooler.csv': { format: 'text', content: new TextDecoder().decode(raw), size: raw.length } });
    const got = await notebookFileReader(manager, () => 'lab/study.ipynb', { maxBytes: () => 1000, rawBytes })(['cooler.csv']);
    expect(fetched).toEqual(['lab/cooler.csv']);
    expect(Array.from(got.files.get('cooler.csv') ?? [])).toEqual(Array.from(raw));
  });

  it('uses the text when it already has the file\'s size (no raw fetch), or when the raw copy is another file or missing', async () => {
    const fetched: string[] = [];
    const plain = csvBytes(false);
    const { manager } = fakeContents({
      'same.csv': { format: 'text', content: CSV, size: plain.length },
      // changed in the browser's storage: the site still has the old file (with a mark)
      'edited.csv': { format: 'text', content: CSV.replace('4.5', '4.75'), size: 0 },
      'made-here.csv': { format: 'text', content: CSV, size: 0 }
    });
    const rawBytes: RawFileFetch = async (path) => {
      fetched.push(path);
      if (path === 'made-here.csv') throw new Error('404');
      return csvBytes(true);
    };
    const got = await notebookFileReader(manager, () => 'study.ipynb', { maxBytes: () => 1000, rawBytes })(['same.csv', 'edited.csv', 'made-here.csv']);
    expect(fetched).toEqual(['edited.csv', 'made-here.csv']);
    expect(got.problems.size).toBe(0);
    expect(Buffer.from(got.files.get('same.csv') ?? []).toString('utf8')).toBe(CSV);
    expect(Buffer.from(got.files.get('edited.csv') ?? []).toString('utf8')).toBe(CSV.replace('4.5', '4.75'));
    expect(Array.from(got.files.get('made-here.csv') ?? [])).toEqual(Array.from(plain));
  });

  it('applies the limit to the raw bytes too', async () => {
    const raw = csvBytes(true);
    const { manager } = fakeContents({ 'c.csv': { format: 'text', content: CSV, size: 0 } });
    const got = await notebookFileReader(manager, () => 'study.ipynb', { maxBytes: () => raw.length - 1, rawBytes: async () => raw })(['c.csv']);
    expect(got.problems.get('c.csv')).toBe(`'c.csv' has ${raw.length} bytes, above the limit of ${raw.length - 1} for a data or weights file (setting maxFileBytes)`);
  });
});
