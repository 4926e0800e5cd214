import type { QueryInterface } from 'sequelize';

/**
 * No stranded captures (issue 13): a capture can be aborted with a reason (who and why are kept
 * beside the state), and a capture that receives no readings for too long is marked `stalled` by
 * the server's sweep. `last_reading_at` is moved by every accepted ingest batch, so the sweep
 * needs no scan of the readings. The state list gains 'stalled': whatever CHECK constraint an
 * earlier migration put on `captures.state` is dropped and recreated with the full list.
 */
export const CAPTURE_STATES = ['open', 'stalled', 'finished', 'aborted'] as const;

/** Drops the CHECK constraints that enumerate `state` (`state IN (…)`), whatever their names. */
async function dropStateChecks(qi: QueryInterface): Promise<void> {
  const [rows] = (await qi.sequelize.query(
    `SELECT conname FROM pg_constraint
     WHERE conrelid = 'captures'::regclass AND contype = 'c'
       AND pg_get_constraintdef(oid) ~ '^CHECK \\(+state\\)*(::text)? = ANY'`,
  )) as [Array<{ conname: string }>, unknown];
  for (const r of rows)
    await qi.sequelize.query(
      `ALTER TABLE captures DROP CONSTRAINT "${r.conname.replace(/"/g, '""')}"`,
    );
}

export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`ALTER TABLE captures
    ADD COLUMN last_reading_at timestamptz NULL,
    ADD COLUMN stalled_at timestamptz NULL,
    ADD COLUMN abort_reason text NULL,
    ADD COLUMN aborted_by integer NULL REFERENCES users (id) ON DELETE SET NULL`);
  await dropStateChecks(qi);
  await qi.sequelize.query(`ALTER TABLE captures DROP CONSTRAINT IF EXISTS captures_state_check`);
  await qi.sequelize.query(
    `ALTER TABLE captures ADD CONSTRAINT captures_state_check CHECK (state IN (${CAPTURE_STATES.map((s) => `'${s}'`).join(', ')}))`,
  );
  // An aborted capture always says why.
  await qi.sequelize.query(
    `ALTER TABLE captures ADD CONSTRAINT captures_abort_reason_check CHECK (state <> 'aborted' OR abort_reason IS NOT NULL) NOT VALID`,
  );
  // The sweep looks only at captures still recording.
  await qi.sequelize.query(`CREATE INDEX captures_open_idx ON captures (id) WHERE state = 'open'`);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`DROP INDEX IF EXISTS captures_open_idx`);
  await qi.sequelize.query(
    `ALTER TABLE captures DROP CONSTRAINT IF EXISTS captures_abort_reason_check`,
  );
  await qi.sequelize.query(`ALTER TABLE captures DROP CONSTRAINT IF EXISTS captures_state_check`);
  await qi.sequelize.query(`UPDATE captures SET state = 'open' WHERE state = 'stalled'`);
  await qi.sequelize.query(
    `ALTER TABLE captures ADD CONSTRAINT captures_state_check CHECK (state IN ('open', 'finished', 'aborted'))`,
  );
  await qi.sequelize.query(`ALTER TABLE captures
    DROP COLUMN aborted_by, DROP COLUMN abort_reason, DROP COLUMN stalled_at, DROP COLUMN last_reading_at`);
}
