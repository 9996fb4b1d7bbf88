/**
 * Version chain of the ledger format. Each entry of {@link MIGRATIONS} lifts a ledger of
 * version n to n + 1 as a pure function of plain JSON; reading applies them in order up to
 * {@link LEDGER_VERSION}.
 *
 * - 1 → 2: a branch's `recipePatch` (recipe keys against the spec; only ever written for
 *   branches forked from the root, where "against the spec" and "against the parent" agree)
 *   becomes `patch`; version 1 patched the recipe only, so no branch restarted. Version 1
 *   branches kept their whole trajectory, which version 2 still reads (a forked branch's
 *   records before its first stored one come from its parent, and there are none before).
 *   Readouts did not exist: none are added.
 * - 2 → 3: the top-level `findings` become exactly encoded (as readouts are, so a non-finite
 *   `measured` survives) and each names its branch; version 2 wrote untagged findings (in
 *   practice none), which are given to the active branch. A branch's readouts may now hold the
 *   diagnosis readouts too; version-2 readouts and their digests stay valid as they are.
 */
import { encodeLoose } from './readouts';
import { LEDGER_FORMAT, LEDGER_VERSION } from './types';

/** A plain JSON object (a ledger of some version, not yet validated). */
export type LedgerJson = Record<string, unknown>;

/** Lifts version `n` to `n + 1`; must not modify its input. */
export type Migration = (value: LedgerJson) => LedgerJson;

/** Version 1 → 2 (see the module comment). */
export function migrateV1(value: LedgerJson): LedgerJson {
  const branches = Array.isArray(value.branches) ? value.branches : [];
  return {
    ...value,
    version: 2,
    branches: branches.map((b: unknown) => {
      if (!isObj(b) || !('recipePatch' in b)) return b;
      const { recipePatch, ...rest } = b;
      return { ...rest, patch: recipePatch };
    })
  };
}

/** Version 2 → 3 (see the module comment). */
export function migrateV2(value: LedgerJson): LedgerJson {
  const findings = Array.isArray(value.findings) ? value.findings : [];
  const active = typeof value.activeBranch === 'string' ? value.activeBranch : '';
  return {
    ...value,
    version: 3,
    findings: findings.map((f: unknown, i: number) => {
      if (!isObj(f)) return f;
      // Version 2 kept plain JSON: encoding it escapes only strings that look like encoded numbers.
      const tagged = typeof f.branch === 'string' ? f : { ...f, branch: active };
      return encodeLoose(tagged, `findings[${i}]`);
    })
  };
}

/** Migrations keyed by the version they read. */
export const MIGRATIONS: Readonly<Record<number, Migration>> = { 1: migrateV1, 2: migrateV2 };

/** The oldest version this code can read. */
export const OLDEST_READABLE_VERSION = 1;

/** Outcome of {@link migrateLedger}. */
export type MigrateResult = { ok: true; value: LedgerJson; fromVersion: number } | { ok: false; errors: string[] };

const isObj = (v: unknown): v is LedgerJson => typeof v === 'object' && v !== null && !Array.isArray(v);

/**
 * Brings a stored ledger to the current version, or explains why it cannot.
 * Checks only `format` and `version`; the result still needs {@link validateLedger}.
 */
export function migrateLedger(value: unknown, chain: Readonly<Record<number, Migration>> = MIGRATIONS, current: number = LEDGER_VERSION): MigrateResult {
  if (!isObj(value)) return { ok: false, errors: [`ledger: expected an object, got ${value === null ? 'null' : Array.isArray(value) ? 'a list' : typeof value}`] };
  if (value.format !== LEDGER_FORMAT)
    return { ok: false, errors: [`format: expected '${LEDGER_FORMAT}', got ${JSON.stringify(value.format) ?? 'nothing'} (this metadata was not written by Stepwell)`] };
  const version = value.version;
  if (typeof version !== 'number' || !Number.isInteger(version) || version < 1)
    return { ok: false, errors: [`version: expected a positive integer, got ${JSON.stringify(version) ?? 'nothing'}`] };
  if (version > current)
    return { ok: false, errors: [`version: ledger version ${version} is newer than this Stepwell, which reads versions ${OLDEST_READABLE_VERSION} to ${current}; update the extension to open it`] };
  if (version < OLDEST_READABLE_VERSION)
    return { ok: false, errors: [`version: ledger version ${version} is older than the oldest readable version ${OLDEST_READABLE_VERSION}`] };
  let v: LedgerJson = value;
  for (let n = version; n < current; n++) {
    const step = chain[n];
    if (!step) return { ok: false, errors: [`version: no migration from ledger version ${n} to ${n + 1}`] };
    try {
      v = step(v);
    } catch (err) {
      return { ok: false, errors: [`version: migrating from version ${n} to ${n + 1} failed: ${err instanceof Error ? err.message : String(err)}`] };
    }
    if (!isObj(v) || v.version !== n + 1) return { ok: false, errors: [`version: the migration from version ${n} did not produce version ${n + 1}`] };
  }
  return { ok: true, value: v, fromVersion: version };
}

/**
 * Digs the spec text out of a stored value even when the ledger is damaged, so the UI can
 * show the user's text untouched. Returns undefined when there is no spec string.
 */
export function recoverSpec(value: unknown): string | undefined {
  if (!isObj(value)) return undefined;
  return typeof value.spec === 'string' ? value.spec : undefined;
}
