import type { QueryInterface } from 'sequelize';

/**
 * Accelerometers as first-class DUTs (issue 13):
 * - `duts.quantity_limits`: the limits of a DUT's quantities beyond its primary one (an
 *   accelerometer's sensitivity in %, a crystal's stability at a chosen τ), keyed by quantity;
 *   the primary quantity keeps the existing limit columns;
 * - `tilt_checks`: a guided tilt check's result (offset and sensitivity of an axis from its flat
 *   and inverted captures, with their budgets), the DUT's result at that checkpoint.
 */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q(`ALTER TABLE duts ADD COLUMN quantity_limits jsonb NULL
            CONSTRAINT duts_quantity_limits_object CHECK (quantity_limits IS NULL OR jsonb_typeof(quantity_limits) = 'object')`);
  await q(`CREATE TABLE tilt_checks (
    id serial PRIMARY KEY,
    dut_id integer NOT NULL REFERENCES duts (id) ON DELETE CASCADE,
    checkpoint_id integer NOT NULL REFERENCES checkpoints (id) ON DELETE CASCADE,
    axis char(1) NOT NULL DEFAULT 'z' CONSTRAINT tilt_checks_axis_allowed CHECK (axis IN ('x', 'y', 'z')),
    flat_capture_id integer NOT NULL REFERENCES captures (id) ON DELETE CASCADE,
    inverted_capture_id integer NOT NULL REFERENCES captures (id) ON DELETE CASCADE,
    on_edge_capture_id integer NULL REFERENCES captures (id) ON DELETE SET NULL,
    local_gravity double precision NOT NULL,
    lsb_mg double precision NOT NULL CHECK (lsb_mg > 0),
    orientation_error_deg double precision NOT NULL CHECK (orientation_error_deg >= 0 AND orientation_error_deg <= 45),
    result jsonb NOT NULL,
    created_by integer NULL REFERENCES users (id) ON DELETE SET NULL,
    created_at timestamptz NOT NULL DEFAULT now(),
    updated_at timestamptz NOT NULL DEFAULT now())`);
  await q('CREATE INDEX tilt_checks_dut_checkpoint ON tilt_checks (dut_id, checkpoint_id, id)');
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q('DROP TABLE IF EXISTS tilt_checks');
  await q('ALTER TABLE duts DROP COLUMN IF EXISTS quantity_limits');
}
