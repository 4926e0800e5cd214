import type { QueryInterface } from 'sequelize';

/**
 * Processes by kind and editing with history (issue 13):
 * - a checkpoint's exposure names its process kind; every exposure stored before this migration
 *   was planned on the wash form, so it becomes kind 'wash' with its fields kept (a planner may
 *   now edit a checkpoint and give it its real kind);
 * - studies, checkpoints and DUTs may be archived (kept with their captures, out of the plan);
 * - a capture may be excluded from the evidence with a reason, by whom and when;
 * - `study_cells` holds the capture a lead chose to represent one DUT × checkpoint (no row: the
 *   latest valid capture). Deleting the capture, DUT or checkpoint deletes the choice.
 *
 * The kinds are copied here as they stood in shared/protocol/process.ts: a migration is frozen.
 */
const KINDS = ['wash', 'reflow', 'bake', 'thermal-cycling', 'conformal-coat', 'vibration', 'other'];

export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q(`UPDATE checkpoints SET exposure = jsonb_build_object('kind', 'wash') || exposure
            WHERE exposure IS NOT NULL AND jsonb_typeof(exposure) = 'object' AND NOT exposure ? 'kind'`);
  await q(`ALTER TABLE checkpoints ADD CONSTRAINT checkpoints_exposure_kind_allowed
            CHECK (exposure IS NULL OR exposure->>'kind' IN (${KINDS.map((k) => `'${k}'`).join(', ')}))`);
  for (const table of ['studies', 'checkpoints', 'duts']) {
    await q(`ALTER TABLE ${table} ADD COLUMN archived_at timestamptz NULL`);
  }
  await q(`ALTER TABLE captures
    ADD COLUMN excluded_at timestamptz NULL,
    ADD COLUMN excluded_by integer NULL REFERENCES users (id) ON DELETE SET NULL,
    ADD COLUMN exclusion_reason text NULL,
    ADD CONSTRAINT captures_exclusion_has_reason CHECK ((excluded_at IS NULL) = (exclusion_reason IS NULL))`);
  await q(`CREATE TABLE study_cells (
    dut_id integer NOT NULL REFERENCES duts (id) ON DELETE CASCADE,
    checkpoint_id integer NOT NULL REFERENCES checkpoints (id) ON DELETE CASCADE,
    capture_id integer NOT NULL REFERENCES captures (id) ON DELETE CASCADE,
    chosen_by integer NULL REFERENCES users (id) ON DELETE SET NULL,
    chosen_at timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (dut_id, checkpoint_id))`);
  await q('CREATE INDEX study_cells_capture ON study_cells (capture_id)');
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q('DROP TABLE IF EXISTS study_cells');
  await q(`ALTER TABLE captures DROP CONSTRAINT IF EXISTS captures_exclusion_has_reason,
    DROP COLUMN IF EXISTS excluded_at, DROP COLUMN IF EXISTS excluded_by, DROP COLUMN IF EXISTS exclusion_reason`);
  for (const table of ['studies', 'checkpoints', 'duts'])
    await q(`ALTER TABLE ${table} DROP COLUMN IF EXISTS archived_at`);
  await q('ALTER TABLE checkpoints DROP CONSTRAINT IF EXISTS checkpoints_exposure_kind_allowed');
  await q(`UPDATE checkpoints SET exposure = exposure - 'kind' WHERE exposure ? 'kind'`);
}
