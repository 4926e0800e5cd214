import type { QueryInterface } from 'sequelize';

/**
 * Account security: a token version per user (every sign-in token carries it; bumping it revokes
 * all of the user's tokens at once — on sign-out, deactivation, role change and password change),
 * and a flag that forces a password change at the next sign-in after an admin reset.
 */
export async function up({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`
    ALTER TABLE users
      ADD COLUMN token_version integer NOT NULL DEFAULT 0,
      ADD COLUMN must_change_password boolean NOT NULL DEFAULT false,
      ADD COLUMN password_changed_at timestamptz NULL`);
}

export async function down({ context: qi }: { context: QueryInterface }): Promise<void> {
  await qi.sequelize.query(`
    ALTER TABLE users DROP COLUMN token_version, DROP COLUMN must_change_password, DROP COLUMN password_changed_at`);
}
