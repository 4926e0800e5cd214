import { DataTypes, type QueryInterface } from 'sequelize';

/** The initial schema: people, the lab, studies and their plan, captures and readings, the audit log. */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  const stamps = {
    created_at: { type: DataTypes.DATE, allowNull: false, defaultValue: DataTypes.NOW },
    updated_at: { type: DataTypes.DATE, allowNull: false, defaultValue: DataTypes.NOW },
  };
  const id = { type: DataTypes.INTEGER, primaryKey: true, autoIncrement: true };
  const ref = (table: string, onDelete = 'RESTRICT', allowNull = false) => ({
    type: DataTypes.INTEGER,
    allowNull,
    references: { model: table, key: 'id' },
    onDelete,
  });

  await qi.createTable('users', {
    id,
    email: { type: DataTypes.STRING(254), allowNull: false, unique: true },
    name: { type: DataTypes.STRING(120), allowNull: false },
    role: { type: DataTypes.STRING(20), allowNull: false },
    password_hash: { type: DataTypes.STRING(100), allowNull: false },
    active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
    last_login_at: { type: DataTypes.DATE, allowNull: true },
    ...stamps,
  });

  await qi.createTable('instruments', {
    id,
    name: { type: DataTypes.STRING(120), allowNull: false },
    kind: { type: DataTypes.STRING(20), allowNull: false },
    maker: { type: DataTypes.STRING(120), allowNull: true },
    model: { type: DataTypes.STRING(120), allowNull: true },
    serial: { type: DataTypes.STRING(120), allowNull: true },
    calibration_due: { type: DataTypes.DATEONLY, allowNull: true },
    notes: { type: DataTypes.TEXT, allowNull: true },
    link_profile: { type: DataTypes.JSONB, allowNull: true },
    ...stamps,
  });

  await qi.createTable('frequency_references', {
    id,
    name: { type: DataTypes.STRING(120), allowNull: false },
    nominal_hz: { type: DataTypes.DOUBLE, allowNull: false },
    fractional_offset: { type: DataTypes.DOUBLE, allowNull: false, defaultValue: 0 },
    standard_uncertainty: { type: DataTypes.DOUBLE, allowNull: false },
    verified_by: { type: DataTypes.TEXT, allowNull: true },
    verified_at: { type: DataTypes.DATEONLY, allowNull: true },
    instrument_id: ref('instruments', 'SET NULL', true),
    ...stamps,
  });

  await qi.createTable('studies', {
    id,
    title: { type: DataTypes.STRING(200), allowNull: false },
    process: { type: DataTypes.STRING(200), allowNull: true },
    description: { type: DataTypes.TEXT, allowNull: true },
    status: { type: DataTypes.STRING(20), allowNull: false, defaultValue: 'draft' },
    created_by: ref('users', 'SET NULL', true),
    ...stamps,
  });

  await qi.createTable('checkpoints', {
    id,
    study_id: ref('studies', 'CASCADE'),
    name: { type: DataTypes.STRING(200), allowNull: false },
    position: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
    exposure: { type: DataTypes.JSONB, allowNull: true },
    ...stamps,
  });
  await qi.addIndex('checkpoints', ['study_id', 'position']);

  await qi.createTable('duts', {
    id,
    study_id: ref('studies', 'CASCADE'),
    label: { type: DataTypes.STRING(120), allowNull: false },
    kind: { type: DataTypes.STRING(30), allowNull: false },
    nominal: { type: DataTypes.DOUBLE, allowNull: false },
    unit: { type: DataTypes.STRING(20), allowNull: false },
    limit_value: { type: DataTypes.DOUBLE, allowNull: false },
    limit_unit: { type: DataTypes.STRING(8), allowNull: false },
    position: { type: DataTypes.STRING(60), allowNull: true },
    serial: { type: DataTypes.STRING(120), allowNull: true },
    ...stamps,
  });
  await qi.addIndex('duts', ['study_id']);

  await qi.createTable('captures', {
    id,
    dut_id: ref('duts', 'RESTRICT'),
    checkpoint_id: ref('checkpoints', 'RESTRICT'),
    instrument_id: ref('instruments', 'SET NULL', true),
    reference_id: ref('frequency_references', 'SET NULL', true),
    operator_id: ref('users', 'SET NULL', true),
    quantity: { type: DataTypes.STRING(20), allowNull: false },
    unit: { type: DataTypes.STRING(20), allowNull: false },
    nominal: { type: DataTypes.DOUBLE, allowNull: true },
    gate_time: { type: DataTypes.DOUBLE, allowNull: false },
    dead_time: { type: DataTypes.DOUBLE, allowNull: true },
    ambient_c: { type: DataTypes.DOUBLE, allowNull: true },
    orientation: { type: DataTypes.STRING(40), allowNull: true },
    notes: { type: DataTypes.TEXT, allowNull: true },
    tags: { type: DataTypes.ARRAY(DataTypes.STRING(60)), allowNull: false, defaultValue: [] },
    reference_offset: { type: DataTypes.DOUBLE, allowNull: true },
    reference_uncertainty: { type: DataTypes.DOUBLE, allowNull: true },
    link_profile: { type: DataTypes.JSONB, allowNull: true },
    state: { type: DataTypes.STRING(20), allowNull: false, defaultValue: 'open' },
    started_at: { type: DataTypes.DATE, allowNull: false, defaultValue: DataTypes.NOW },
    ended_at: { type: DataTypes.DATE, allowNull: true },
    reading_count: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
    highest_seq: { type: DataTypes.INTEGER, allowNull: false, defaultValue: -1 },
    summary: { type: DataTypes.JSONB, allowNull: true },
    ...stamps,
  });
  await qi.addIndex('captures', ['dut_id', 'checkpoint_id']);
  await qi.addIndex('captures', ['state']);

  // Readings are written by the ingest path with raw SQL; (capture_id, seq) makes resends idempotent.
  await qi.sequelize.query(`
    CREATE TABLE readings (
      capture_id integer NOT NULL REFERENCES captures(id) ON DELETE CASCADE,
      seq integer NOT NULL,
      t double precision NOT NULL,
      value double precision NOT NULL,
      flags smallint NOT NULL DEFAULT 0,
      PRIMARY KEY (capture_id, seq)
    )`);

  await qi.createTable('audit_events', {
    id: { type: DataTypes.BIGINT, primaryKey: true, autoIncrement: true },
    actor_id: ref('users', 'SET NULL', true),
    action: { type: DataTypes.STRING(60), allowNull: false },
    subject_type: { type: DataTypes.STRING(40), allowNull: false },
    subject_id: { type: DataTypes.INTEGER, allowNull: true },
    details: { type: DataTypes.JSONB, allowNull: true },
    created_at: { type: DataTypes.DATE, allowNull: false, defaultValue: DataTypes.NOW },
  });
  await qi.addIndex('audit_events', ['subject_type', 'subject_id']);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  for (const t of [
    'audit_events',
    'readings',
    'captures',
    'duts',
    'checkpoints',
    'studies',
    'frequency_references',
    'instruments',
    'users',
  ]) {
    await qi.dropTable(t, { cascade: true });
  }
}
