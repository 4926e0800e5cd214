import type { QueryInterface } from 'sequelize';

/**
 * The lab's equipment over time (issue 14):
 * - `calibration_records`: one row per calibration of an instrument or a frequency reference
 *   (date, due date, certificate, issuing lab, stated uncertainty). Rows are history: an UPDATE is
 *   refused by a trigger, so a record is never overwritten — a correction is a new record.
 * - instruments and references can be away at a calibration lab (`away_since`) or retired
 *   (`retired_at`, kept for the captures that name them, never offered again);
 * - references get a calibration due date and one may be the lab's reference (`lab_default`),
 *   the bench's default;
 * - instruments gain the kind `thermometer` (the bench thermometer fills the ambient field). A
 *   CHECK on `instruments.kind` added by an earlier migration is replaced with the new list.
 */
const KINDS = ['counter', 'spi-bridge', 'reference', 'thermometer', 'other'];
const OLD_KINDS = ['counter', 'spi-bridge', 'reference', 'other'];

async function replaceKindCheck(qi: QueryInterface, kinds: string[]): Promise<void> {
  // Whatever name an earlier migration gave it: every CHECK on instruments that reads `kind`.
  const [rows] = (await qi.sequelize.query(
    `SELECT conname FROM pg_constraint
     WHERE conrelid = 'instruments'::regclass AND contype = 'c' AND pg_get_constraintdef(oid) ~ '\\mkind\\M'`,
  )) as [Array<{ conname: string }>, unknown];
  for (const { conname } of rows) {
    await qi.sequelize.query(
      `ALTER TABLE instruments DROP CONSTRAINT "${conname.replace(/"/g, '""')}"`,
    );
  }
  const list = kinds.map((k) => `'${k}'`).join(', ');
  await qi.sequelize.query(
    `ALTER TABLE instruments ADD CONSTRAINT instruments_kind_allowed CHECK (kind IN (${list}))`,
  );
}

export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`
    ALTER TABLE instruments
      ADD COLUMN away_since date NULL,
      ADD COLUMN retired_at timestamptz NULL,
      ADD COLUMN retired_reason text NULL;
    ALTER TABLE frequency_references
      ADD COLUMN calibration_due date NULL,
      ADD COLUMN away_since date NULL,
      ADD COLUMN retired_at timestamptz NULL,
      ADD COLUMN retired_reason text NULL,
      ADD COLUMN lab_default boolean NOT NULL DEFAULT false;
    CREATE UNIQUE INDEX frequency_references_one_lab_default ON frequency_references ((true)) WHERE lab_default;

    CREATE TABLE calibration_records (
      id serial PRIMARY KEY,
      instrument_id integer NULL REFERENCES instruments (id) ON DELETE CASCADE,
      reference_id integer NULL REFERENCES frequency_references (id) ON DELETE CASCADE,
      calibrated_on date NOT NULL,
      due_on date NULL,
      certificate varchar(120) NOT NULL,
      issued_by varchar(200) NOT NULL,
      uncertainty varchar(200) NULL,
      fractional_offset double precision NULL,
      standard_uncertainty double precision NULL,
      notes text NULL,
      recorded_by integer NULL REFERENCES users (id) ON DELETE SET NULL,
      created_at timestamptz NOT NULL DEFAULT now(),
      CONSTRAINT calibration_records_one_subject CHECK (num_nonnulls(instrument_id, reference_id) = 1),
      CONSTRAINT calibration_records_due_after CHECK (due_on IS NULL OR due_on > calibrated_on),
      CONSTRAINT calibration_records_u_positive CHECK (standard_uncertainty IS NULL OR standard_uncertainty > 0)
    );
    CREATE INDEX calibration_records_instrument ON calibration_records (instrument_id, calibrated_on DESC, id DESC)
      WHERE instrument_id IS NOT NULL;
    CREATE INDEX calibration_records_reference ON calibration_records (reference_id, calibrated_on DESC, id DESC)
      WHERE reference_id IS NOT NULL;

    CREATE FUNCTION driftbench_calibration_records_keep() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      RAISE EXCEPTION 'calibration records are history: record a new calibration instead of changing one'
        USING ERRCODE = 'restrict_violation';
    END $$;
    CREATE TRIGGER calibration_records_keep BEFORE UPDATE ON calibration_records
      FOR EACH ROW EXECUTE FUNCTION driftbench_calibration_records_keep();
  `);
  await replaceKindCheck(qi, KINDS);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`UPDATE instruments SET kind = 'other' WHERE kind = 'thermometer'`);
  await replaceKindCheck(qi, OLD_KINDS);
  await qi.sequelize.query(`
    DROP TABLE calibration_records;
    DROP FUNCTION driftbench_calibration_records_keep();
    DROP INDEX frequency_references_one_lab_default;
    ALTER TABLE frequency_references
      DROP COLUMN calibration_due, DROP COLUMN away_since, DROP COLUMN retired_at,
      DROP COLUMN retired_reason, DROP COLUMN lab_default;
    ALTER TABLE instruments DROP COLUMN away_since, DROP COLUMN retired_at, DROP COLUMN retired_reason;
  `);
}
