import type { QueryInterface } from 'sequelize';

/**
 * The inputs issue 8's uncertainty needs (docs/references.md):
 * - instruments: counter type (gated / reciprocal / time-interval) and resolution (counts for a
 *   gated counter, seconds otherwise);
 * - frequency references: their kind and ageing rate with its standard uncertainty (fractional
 *   per day), beside the offset, its uncertainty and the verification date they already have;
 * - captures: the counter's type and resolution and the reference's verification date and ageing,
 *   copied when the capture starts like the reference offset, so old evidence never changes;
 * - DUTs: asymmetric or one-sided limits (limit_low / limit_high, in the limit unit), the
 *   symmetric limit_value becoming optional, and a tuning fork's turnover T0 and parabolic
 *   coefficient B with their standard uncertainties (null: Driftbench's defaults).
 */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q(`ALTER TABLE instruments
    ADD COLUMN counter_type varchar(16) NULL CHECK (counter_type IN ('gated', 'reciprocal', 'time-interval')),
    ADD COLUMN counter_resolution double precision NULL CHECK (counter_resolution > 0)`);
  await q(`ALTER TABLE frequency_references
    ADD COLUMN kind varchar(24) NULL CHECK (kind IN ('gnss-disciplined', 'rubidium', 'ocxo', 'internal-timebase', 'other')),
    ADD COLUMN ageing_per_day double precision NULL,
    ADD COLUMN ageing_u_per_day double precision NULL CHECK (ageing_u_per_day >= 0),
    ADD CONSTRAINT frequency_references_uncertainty_check CHECK (standard_uncertainty >= 0)`);
  await q(`ALTER TABLE captures
    ADD COLUMN counter_type varchar(16) NULL CHECK (counter_type IN ('gated', 'reciprocal', 'time-interval')),
    ADD COLUMN counter_resolution double precision NULL CHECK (counter_resolution > 0),
    ADD COLUMN reference_verified_at date NULL,
    ADD COLUMN reference_ageing_per_day double precision NULL,
    ADD COLUMN reference_ageing_u_per_day double precision NULL CHECK (reference_ageing_u_per_day >= 0)`);
  await q(`ALTER TABLE duts
    ALTER COLUMN limit_value DROP NOT NULL,
    ADD COLUMN limit_low double precision NULL,
    ADD COLUMN limit_high double precision NULL,
    ADD COLUMN turnover_c double precision NULL,
    ADD COLUMN turnover_u double precision NULL CHECK (turnover_u >= 0),
    ADD COLUMN parabolic_b double precision NULL,
    ADD COLUMN parabolic_b_u double precision NULL CHECK (parabolic_b_u >= 0),
    ADD CONSTRAINT duts_limit_present CHECK (limit_value > 0 OR limit_low IS NOT NULL OR limit_high IS NOT NULL),
    ADD CONSTRAINT duts_limit_order CHECK (limit_low IS NULL OR limit_high IS NULL OR limit_low < limit_high)`);
  await q(
    `ALTER TABLE duts ADD CONSTRAINT duts_limit_unit_check CHECK (limit_unit IN ('ppm', 'ppb', 'Hz', 'mg', '%'))`,
  );
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q(`ALTER TABLE duts DROP CONSTRAINT duts_limit_unit_check, DROP CONSTRAINT duts_limit_order, DROP CONSTRAINT duts_limit_present,
    DROP COLUMN parabolic_b_u, DROP COLUMN parabolic_b, DROP COLUMN turnover_u, DROP COLUMN turnover_c,
    DROP COLUMN limit_high, DROP COLUMN limit_low`);
  await q(`UPDATE duts SET limit_value = 1 WHERE limit_value IS NULL`);
  await q(`ALTER TABLE duts ALTER COLUMN limit_value SET NOT NULL`);
  await q(`ALTER TABLE captures DROP COLUMN reference_ageing_u_per_day, DROP COLUMN reference_ageing_per_day,
    DROP COLUMN reference_verified_at, DROP COLUMN counter_resolution, DROP COLUMN counter_type`);
  await q(`ALTER TABLE frequency_references DROP CONSTRAINT frequency_references_uncertainty_check,
    DROP COLUMN ageing_u_per_day, DROP COLUMN ageing_per_day, DROP COLUMN kind`);
  await q(`ALTER TABLE instruments DROP COLUMN counter_resolution, DROP COLUMN counter_type`);
}
