import type { QueryInterface } from 'sequelize';

/**
 * Every state, status, role and kind column accepts only its listed values, so a row written
 * around the services (a script, a hand-typed fix) cannot hold a word the product does not know.
 *
 * The lists are copied here as they stood in `shared/protocol` when this migration was written:
 * a migration is frozen, so it never imports the live enums. A later migration that adds a value
 * drops the constraint by its name (`<table>_<column>_allowed`) and adds it again with the new list.
 * Earlier, unnamed checks on the same columns are replaced so each column has one list.
 */
export const ALLOWED: ReadonlyArray<{
  table: string;
  column: string;
  values: readonly string[];
  nullable?: boolean;
  /** The column had an unnamed `<table>_<column>_check` before; `down` puts it back. */
  hadCheck?: boolean;
}> = [
  { table: 'users', column: 'role', values: ['admin', 'lead', 'engineer', 'technician', 'viewer'] },
  {
    table: 'studies',
    column: 'status',
    values: ['draft', 'running', 'in-review', 'approved', 'returned'],
    hadCheck: true,
  },
  { table: 'instruments', column: 'kind', values: ['counter', 'spi-bridge', 'reference', 'other'] },
  {
    table: 'instruments',
    column: 'counter_type',
    values: ['gated', 'reciprocal', 'time-interval'],
    nullable: true,
    hadCheck: true,
  },
  {
    table: 'frequency_references',
    column: 'kind',
    values: ['gnss-disciplined', 'rubidium', 'ocxo', 'internal-timebase', 'other'],
    nullable: true,
    hadCheck: true,
  },
  {
    table: 'duts',
    column: 'kind',
    values: [
      'crystal',
      'oscillator',
      'tuning-fork',
      'tcxo',
      'accelerometer',
      'capacitor',
      'relay',
      'other',
    ],
  },
  { table: 'duts', column: 'limit_unit', values: ['ppm', 'ppb', 'Hz', 'mg', '%'], hadCheck: true },
  { table: 'captures', column: 'state', values: ['open', 'finished', 'aborted'] },
  {
    table: 'captures',
    column: 'quantity',
    values: ['frequency', 'acceleration', 'voltage', 'counts'],
  },
  {
    table: 'captures',
    column: 'counter_type',
    values: ['gated', 'reciprocal', 'time-interval'],
    nullable: true,
    hadCheck: true,
  },
  {
    table: 'captures',
    column: 'orientation',
    values: [
      'flat',
      'on-edge',
      'inverted',
      'x-up',
      'x-down',
      'y-up',
      'y-down',
      'z-up',
      'z-down',
      'other',
    ],
    nullable: true,
  },
  {
    table: 'study_reviews',
    column: 'action',
    values: ['start', 'submit', 'approve', 'return', 'reopen'],
    hadCheck: true,
  },
  {
    table: 'study_reviews',
    column: 'from_status',
    values: ['draft', 'running', 'in-review', 'approved', 'returned'],
  },
  {
    table: 'study_reviews',
    column: 'to_status',
    values: ['draft', 'running', 'in-review', 'approved', 'returned'],
  },
  {
    table: 'attachments',
    column: 'owner_type',
    values: ['study', 'checkpoint', 'capture'],
    hadCheck: true,
  },
  {
    table: 'mail_outbox',
    column: 'status',
    values: ['queued', 'retrying', 'sent', 'failed'],
    hadCheck: true,
  },
];

/** Link profiles (JSONB) name their link kind; both tables that store one accept only these. */
const LINK_KINDS = ['serial', 'simulator'];
const LINK_PROFILE_TABLES = ['instruments', 'captures'];

/** Readings' flag bits 0–5 (garbled, timeout, overrange, overlong, partial, implausible). */
const READING_FLAG_MASK = 63;

const list = (values: readonly string[]) =>
  values.map((v) => `'${v.replace(/'/g, "''")}'`).join(', ');

/** The CHECK constraints of `table` that mention only `column` (its older, unnamed value lists). */
async function checksOn(qi: QueryInterface, table: string, column: string): Promise<string[]> {
  const [rows] = (await qi.sequelize.query(
    `SELECT c.conname FROM pg_constraint c
       JOIN pg_attribute a ON a.attrelid = c.conrelid AND a.attnum = ANY (c.conkey)
      WHERE c.conrelid = $1::regclass AND c.contype = 'c' AND array_length(c.conkey, 1) = 1
        AND a.attname = $2 AND pg_get_constraintdef(c.oid) ~ '= ANY'`,
    { bind: [table, column] },
  )) as [Array<{ conname: string }>, unknown];
  return rows.map((r) => r.conname);
}

export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  for (const { table, column, values, nullable } of ALLOWED) {
    for (const name of await checksOn(qi, table, column))
      await q(`ALTER TABLE ${table} DROP CONSTRAINT "${name}"`);
    const test = `${column} IN (${list(values)})`;
    await q(
      `ALTER TABLE ${table} ADD CONSTRAINT ${table}_${column}_allowed CHECK (${nullable ? `${column} IS NULL OR ` : ''}${test})`,
    );
  }
  // Through a function, so the constraint's text never mentions a bare `kind` column (a later
  // migration replaces the instruments' kind check by matching that word).
  await q(`CREATE FUNCTION driftbench_link_profile_allowed(p jsonb) RETURNS boolean
    LANGUAGE sql IMMUTABLE AS $$ SELECT p IS NULL OR p->>'kind' IN (${list(LINK_KINDS)}) $$`);
  for (const table of LINK_PROFILE_TABLES) {
    await q(
      `ALTER TABLE ${table} ADD CONSTRAINT ${table}_link_profile_allowed CHECK (driftbench_link_profile_allowed(link_profile))`,
    );
  }
  await q(
    `ALTER TABLE readings ADD CONSTRAINT readings_flags_allowed CHECK (flags >= 0 AND flags <= ${READING_FLAG_MASK})`,
  );
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q(`ALTER TABLE readings DROP CONSTRAINT IF EXISTS readings_flags_allowed`);
  for (const table of LINK_PROFILE_TABLES)
    await q(`ALTER TABLE ${table} DROP CONSTRAINT IF EXISTS ${table}_link_profile_allowed`);
  await q(`DROP FUNCTION IF EXISTS driftbench_link_profile_allowed(jsonb)`);
  for (const { table, column, values, nullable, hadCheck } of [...ALLOWED].reverse()) {
    await q(`ALTER TABLE ${table} DROP CONSTRAINT IF EXISTS ${table}_${column}_allowed`);
    if (hadCheck) {
      const test = `${column} IN (${list(values)})`;
      await q(
        `ALTER TABLE ${table} ADD CONSTRAINT ${table}_${column}_check CHECK (${nullable ? `${column} IS NULL OR ` : ''}${test})`,
      );
    }
  }
}
