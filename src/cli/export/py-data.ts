/**
 * The data part of an exported PyTorch script: loading the same files the spec named (checked by
 * their SHA-256, so a changed file stops the script instead of giving other numbers), or the
 * inline rows embedded, and Stepwell's mini-batch order as a small Python port of its generator.
 */
import type { DataSetup, LossName } from '../../core/setup';
import { pyFloats, pyString } from './py-text';

/**
 * Lines defining `X` (float64, rows × inputs) and `Y` (targets; int64 class indices for
 * cross-entropy), and `XH`, `YH` the same way when the setup has a held-out split (`XH = None`
 * otherwise).
 */
export function dataCode(data: DataSetup, loss: LossName, dataDir: string): string[] {
  const cast = (y: string): string[] => (loss === 'cross-entropy' ? [`${y} = ${y}[:, 0].long()`] : []);
  const origin = data.origin;
  const held = data.heldOut;
  if (origin === undefined || origin.reading.format === 'parquet') {
    return [
      origin === undefined
        ? `# the spec's inline rows${data.standardized ? ' (standardized as data.standardize asked)' : ''}`
        : `# the numbers Stepwell read from ${origin.files.map((f) => f.name).join(', ')} (sha256 ${origin.files.map((f) => f.sha256.slice(0, 12)).join(', ')}), embedded: reading parquet in Python needs pyarrow${data.standardized ? '; standardized as data.standardize asked' : ''}`,
      `X = torch.tensor(${pyFloats(data.x, '')}).reshape(${data.rows}, ${data.inputs})`,
      `Y = torch.tensor(${pyFloats(data.y, '')}).reshape(${data.rows}, ${data.targets})`,
      ...cast('Y'),
      ...(held
        ? [
            '# the held-out rows',
            `XH = torch.tensor(${pyFloats(held.x, '')}).reshape(${held.rows}, ${data.inputs})`,
            `YH = torch.tensor(${pyFloats(held.y, '')}).reshape(${held.rows}, ${data.targets})`,
            ...cast('YH'),
          ]
        : ['XH = None']),
    ];
  }
  const r = origin.reading;
  // A split is one file, or two for .npy features with their targets in a file of their own.
  const perSplit = r.format === 'npy' && r.targetColumns === undefined ? 2 : 1;
  const lines = [
    `# data files, relative to DATA_DIR (--data-dir; default: ${pyString(dataDir)} beside this script)`,
    `DATA_FILES = {${origin.files.map((f) => `${pyString(f.name)}: ${pyString(f.sha256)}`).join(', ')}}`,
  ];
  if (r.format === 'csv') lines.push(`CLASSES = ${origin.classes ? JSON.stringify(origin.classes) : 'None'}  # text label -> index (label CLASSES[i] is class i)`);
  const load = (x: string, y: string, main: string, second: string | undefined): string[] => {
    switch (r.format) {
      case 'csv':
        return [`${x}, ${y} = read_csv(${pyString(main)}, header=${r.header ? 'True' : 'False'}, delimiter=${pyString(r.delimiter ?? ',')}, features=${JSON.stringify(r.featureColumns)}, targets=${JSON.stringify(r.targetColumns)}, classes=CLASSES)`];
      case 'npy':
        return [
          `A = np.load(data_file(${pyString(main)})).astype(np.float64)`,
          'A = A.reshape(-1, 1) if A.ndim == 1 else A',
          `${x} = torch.from_numpy(np.ascontiguousarray(A[:, ${JSON.stringify(r.featureColumns)}]))`,
          r.targetColumns !== undefined
            ? `${y} = torch.from_numpy(np.ascontiguousarray(A[:, ${JSON.stringify(r.targetColumns)}]))`
            : `B = np.load(data_file(${pyString(second ?? '')})).astype(np.float64)\n${y} = torch.from_numpy(np.ascontiguousarray(B.reshape(-1, 1) if B.ndim == 1 else B))`,
        ];
      case 'npz':
        return [
          `with np.load(data_file(${pyString(main)})) as archive:`,
          `    A, B = archive[${pyString(r.featureArray ?? 'x')}].astype(np.float64), archive[${pyString(r.targetArray ?? 'y')}].astype(np.float64)`,
          `${x} = torch.from_numpy(np.ascontiguousarray(A.reshape(-1, 1) if A.ndim == 1 else A))`,
          `${y} = torch.from_numpy(np.ascontiguousarray(B.reshape(-1, 1) if B.ndim == 1 else B))`,
        ];
      case 'parquet':
        throw new Error('parquet data are embedded, not loaded (see above)');
      default: {
        const never: never = r.format;
        throw new Error(`unknown data format ${String(never)}`);
      }
    }
  };
  lines.push(...load('X', 'Y', origin.files[0].name, origin.files[1]?.name), ...cast('Y'));
  const heldFiles = origin.files.slice(perSplit);
  if (held && heldFiles.length > 0) lines.push('# the held-out split: the same columns, from its own file', ...load('XH', 'YH', heldFiles[0].name, heldFiles[1]?.name), ...cast('YH'));
  else lines.push('XH = None');
  const st = data.standardized;
  if (st !== undefined) {
    lines.push(
      '# data.standardize: the training rows\' mean and population spread Stepwell computed (a constant column is only centred)',
      `MEAN = torch.tensor(${pyFloats(st.mean, '')})`,
      `DIVISOR = torch.tensor(${pyFloats(st.spread.map((s) => (s > 0 ? s : 1)), '')})`,
      'X = (X - MEAN) / DIVISOR',
      ...(held ? ['XH = (XH - MEAN) / DIVISOR'] : [])
    );
  }
  lines.push(`assert X.shape == (${data.rows}, ${data.inputs}), f"expected ${data.rows} x ${data.inputs} features, read {tuple(X.shape)}"`);
  if (held) lines.push(`assert XH.shape == (${held.rows}, ${data.inputs}), f"expected ${held.rows} x ${data.inputs} held-out features, read {tuple(XH.shape)}"`);
  return lines;
}

/** Helpers the file-loading lines use (emitted only when the data come from files). */
export function dataHelpers(usesCsv: boolean): string[] {
  const lines = [
    'def data_file(name):',
    '    """Path of a data file, checked against the SHA-256 the recipe was made with."""',
    '    path = os.path.join(DATA_DIR, name)',
    '    with open(path, "rb") as fh:',
    '        digest = hashlib.sha256(fh.read()).hexdigest()',
    '    if digest != DATA_FILES[name]:',
    '        sys.exit(f"{path}: SHA-256 {digest} differs from {DATA_FILES[name]}, the file the recipe was exported with; the losses would not match")',
    '    return path',
  ];
  if (!usesCsv) return lines;
  return lines.concat([
    '',
    '',
    'def read_csv(name, header, delimiter, features, targets, classes):',
    '    """The chosen columns of a CSV file as float64 tensors; text labels become class indices."""',
    '    with open(data_file(name), "rb") as fh:',
    '        text = fh.read().decode("utf-8-sig")',
    '    rows = [r for r in csv.reader(io.StringIO(text, newline=""), delimiter=delimiter) if len(r) > 0]',
    '    rows = rows[1:] if header else rows',
    '    x = [[float(r[j]) for j in features] for r in rows]',
    '    if classes is None:',
    '        y = [[float(r[j]) for j in targets] for r in rows]',
    '    else:',
    '        index = {c: i for i, c in enumerate(classes)}',
    '        y = [[float(index[r[j].strip()]) for j in targets] for r in rows]',
    '    return torch.tensor(x, dtype=torch.float64), torch.tensor(y, dtype=torch.float64)',
  ]);
}

/**
 * Python port of Stepwell's mini-batch order (`core/rng.ts`, `core/session/batches.ts`).
 * @param resume - the epoch's order and the position in it, for a script that starts mid-run (a
 *   branch forked after step 0); `state` is then the generator after that order was drawn.
 */
export function batchOrderCode(state: readonly number[], rows: number, batch: number, resume?: { cursor: number; order: Int32Array }): string[] {
  return [
    'class BatchOrder:',
    '    """Stepwell\'s mini-batch order: each epoch a Fisher-Yates permutation of the rows drawn from',
    '    xoshiro128** (Blackman & Vigna, ACM TOMS 2021) with rejection sampling; batches are consecutive',
    '    slices of it, the last one of an epoch holding the remainder. STATE is the generator state',
    '    Stepwell derives from the seed for batches."""',
    '',
    '    M = 0xFFFFFFFF',
    '',
    '    def __init__(self, state, rows, batch, cursor=0, order=None):',
    '        self.s, self.rows, self.batch, self.cursor = list(state), rows, batch, cursor',
    '        self.order = self.permutation() if order is None else list(order)',
    '',
    '    @staticmethod',
    '    def rotl(x, k):',
    '        return ((x << k) | (x >> (32 - k))) & BatchOrder.M',
    '',
    '    def next_uint32(self):',
    '        s, M = self.s, BatchOrder.M',
    '        result = (BatchOrder.rotl((s[1] * 5) & M, 7) * 9) & M',
    '        t = (s[1] << 9) & M',
    '        s[2] ^= s[0]',
    '        s[3] ^= s[1]',
    '        s[1] ^= s[2]',
    '        s[0] ^= s[3]',
    '        s[2] ^= t',
    '        s[3] = BatchOrder.rotl(s[3], 11)',
    '        return result',
    '',
    '    def below(self, n):',
    '        limit = 2**32 - (2**32 % n)',
    '        while True:',
    '            x = self.next_uint32()',
    '            if x < limit:',
    '                return x % n',
    '',
    '    def permutation(self):',
    '        order = list(range(self.rows))',
    '        for i in range(self.rows - 1, 0, -1):',
    '            j = self.below(i + 1)',
    '            order[i], order[j] = order[j], order[i]',
    '        return order',
    '',
    '    def next(self):',
    '        take = min(self.batch, self.rows - self.cursor)',
    '        batch = self.order[self.cursor:self.cursor + take]',
    '        self.cursor += take',
    '        if self.cursor >= self.rows:',
    '            self.cursor = 0',
    '            self.order = self.permutation()',
    '        return torch.tensor(batch, dtype=torch.long)',
    '',
    '',
    resume === undefined
      ? `BATCHES = BatchOrder([${state.join(', ')}], rows=${rows}, batch=${batch})`
      : `BATCHES = BatchOrder([${state.join(', ')}], rows=${rows}, batch=${batch}, cursor=${resume.cursor}, order=[${Array.from(resume.order).join(', ')}])`,
  ];
}

