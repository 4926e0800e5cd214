import type { QueryInterface } from 'sequelize';

/**
 * Review, sign-off and the record (issue 11):
 * - studies carry a revision number and who submitted / approved the current revision;
 * - `study_reviews` is the review history (submit, approve, return, reopen, start);
 * - `study_revisions` keeps the report of every approved revision as it was approved;
 * - `audit_events` become a hash chain (see `driftbench_audit_hash` below and docs/record.md);
 * - captures carry the seal of their raw readings, an optional planned duration and when the
 *   operator was told it ran over;
 * - `attachments`, the outgoing mail queue (`mail_outbox`) and what the local mail service received
 *   (`mail_received`).
 */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);

  await q(`ALTER TABLE studies
    ADD COLUMN revision integer NOT NULL DEFAULT 1 CHECK (revision >= 1),
    ADD COLUMN submitted_by integer NULL REFERENCES users(id) ON DELETE SET NULL,
    ADD COLUMN submitted_at timestamptz NULL,
    ADD COLUMN approved_by integer NULL REFERENCES users(id) ON DELETE SET NULL,
    ADD COLUMN approved_at timestamptz NULL`);
  await q(`ALTER TABLE studies ADD CONSTRAINT studies_status_check
    CHECK (status IN ('draft', 'running', 'in-review', 'approved', 'returned'))`);

  await q(`CREATE TABLE study_reviews (
    id serial PRIMARY KEY,
    study_id integer NOT NULL REFERENCES studies(id) ON DELETE CASCADE,
    revision integer NOT NULL,
    action varchar(20) NOT NULL CHECK (action IN ('start', 'submit', 'approve', 'return', 'reopen')),
    from_status varchar(20) NOT NULL,
    to_status varchar(20) NOT NULL,
    actor_id integer NULL REFERENCES users(id) ON DELETE SET NULL,
    note text NULL,
    created_at timestamptz NOT NULL DEFAULT now())`);
  await q('CREATE INDEX study_reviews_study ON study_reviews (study_id, id)');

  await q(`CREATE TABLE study_revisions (
    id serial PRIMARY KEY,
    study_id integer NOT NULL REFERENCES studies(id) ON DELETE CASCADE,
    revision integer NOT NULL,
    approved_by integer NULL REFERENCES users(id) ON DELETE SET NULL,
    approved_at timestamptz NOT NULL,
    report jsonb NOT NULL,
    created_at timestamptz NOT NULL DEFAULT now(),
    UNIQUE (study_id, revision))`);

  // The chain. The hash of an event is SHA-256 over the previous event's hash and the event's own
  // content, joined by the unit separator; jsonb's text form is canonical (sorted keys, fixed spacing).
  await q(`CREATE FUNCTION driftbench_audit_hash(prev text, id bigint, actor integer, action text,
      subject_type text, subject_id integer, details jsonb, created_at timestamptz) RETURNS text
    LANGUAGE sql IMMUTABLE AS $$
      SELECT encode(sha256(convert_to(concat_ws(chr(31),
        prev, id::text, coalesce(actor::text, ''), action, subject_type, coalesce(subject_id::text, ''),
        coalesce(details::text, 'null'),
        to_char(created_at AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.US"Z"')), 'UTF8')), 'hex')
    $$`);
  await q(`ALTER TABLE audit_events
    ADD COLUMN prev_hash char(64) NULL,
    ADD COLUMN hash char(64) NULL`);
  // Chain whatever was written before the chain existed, in id order.
  await q(`DO $$
    DECLARE r record; prev text := repeat('0', 64); h text;
    BEGIN
      FOR r IN SELECT * FROM audit_events ORDER BY id LOOP
        h := driftbench_audit_hash(prev, r.id, r.actor_id, r.action, r.subject_type, r.subject_id, r.details, r.created_at);
        UPDATE audit_events SET prev_hash = prev, hash = h WHERE id = r.id;
        prev := h;
      END LOOP;
    END $$`);
  await q(
    'ALTER TABLE audit_events ALTER COLUMN prev_hash SET NOT NULL, ALTER COLUMN hash SET NOT NULL',
  );
  await q('CREATE INDEX audit_events_actor ON audit_events (actor_id, id)');
  await q('CREATE INDEX audit_events_action ON audit_events (action, id)');
  await q('CREATE INDEX audit_events_created ON audit_events (created_at)');

  await q(`ALTER TABLE captures
    ADD COLUMN seal_sha256 char(64) NULL,
    ADD COLUMN sealed_at timestamptz NULL,
    ADD COLUMN planned_minutes integer NULL CHECK (planned_minutes IS NULL OR planned_minutes BETWEEN 1 AND 525600),
    ADD COLUMN overdue_notified_at timestamptz NULL`);

  await q(`CREATE TABLE attachments (
    id serial PRIMARY KEY,
    study_id integer NOT NULL REFERENCES studies(id) ON DELETE CASCADE,
    owner_type varchar(12) NOT NULL CHECK (owner_type IN ('study', 'checkpoint', 'capture')),
    owner_id integer NOT NULL,
    filename varchar(255) NOT NULL,
    content_type varchar(100) NOT NULL,
    size_bytes bigint NOT NULL CHECK (size_bytes >= 0),
    sha256 char(64) NOT NULL,
    storage_key varchar(200) NOT NULL UNIQUE,
    uploaded_by integer NULL REFERENCES users(id) ON DELETE SET NULL,
    created_at timestamptz NOT NULL DEFAULT now())`);
  await q('CREATE INDEX attachments_owner ON attachments (owner_type, owner_id)');
  await q('CREATE INDEX attachments_study ON attachments (study_id)');

  await q(`CREATE TABLE mail_outbox (
    id serial PRIMARY KEY,
    kind varchar(40) NOT NULL,
    to_address varchar(254) NOT NULL,
    subject varchar(300) NOT NULL,
    body text NOT NULL,
    status varchar(12) NOT NULL DEFAULT 'queued' CHECK (status IN ('queued', 'retrying', 'sent', 'failed')),
    attempts integer NOT NULL DEFAULT 0,
    next_attempt_at timestamptz NOT NULL DEFAULT now(),
    last_error text NULL,
    sent_at timestamptz NULL,
    dedupe_key varchar(200) NULL UNIQUE,
    created_at timestamptz NOT NULL DEFAULT now())`);
  await q(
    `CREATE INDEX mail_outbox_due ON mail_outbox (next_attempt_at) WHERE status IN ('queued', 'retrying')`,
  );

  await q(`CREATE TABLE mail_received (
    id serial PRIMARY KEY,
    mail_from varchar(254) NULL,
    rcpt_to text NOT NULL,
    subject text NOT NULL,
    body text NOT NULL,
    message_id varchar(300) NULL,
    size_bytes integer NOT NULL,
    received_at timestamptz NOT NULL DEFAULT now())`);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q(
    'DROP TABLE IF EXISTS mail_received, mail_outbox, attachments, study_revisions, study_reviews',
  );
  await q(`ALTER TABLE captures DROP COLUMN seal_sha256, DROP COLUMN sealed_at, DROP COLUMN planned_minutes,
    DROP COLUMN overdue_notified_at`);
  await q('DROP INDEX IF EXISTS audit_events_actor, audit_events_action, audit_events_created');
  await q('ALTER TABLE audit_events DROP COLUMN prev_hash, DROP COLUMN hash');
  await q('DROP FUNCTION driftbench_audit_hash');
  await q('ALTER TABLE studies DROP CONSTRAINT studies_status_check');
  await q(`ALTER TABLE studies DROP COLUMN revision, DROP COLUMN submitted_by, DROP COLUMN submitted_at,
    DROP COLUMN approved_by, DROP COLUMN approved_at`);
}
