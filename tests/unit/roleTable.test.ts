// Who may do what has one home: the permission table in shared/protocol/roles.ts, which the
// server enforces and the client's router guard and nav rail read. This test keeps role names
// out of the decisions elsewhere: no `role === 'lead'`, no route meta listing roles.
import { readdirSync, readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { ROLES } from '../../shared/protocol/roles.js';

const ROOT = path.resolve(import.meta.dirname, '../..');

function files(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const full = path.join(dir, name);
    return statSync(full).isDirectory() ? files(full) : /\.(ts|vue)$/.test(name) ? [full] : [];
  });
}

const names = ROLES.join('|');
/** A role compared or listed in code: `role === 'lead'`, `role !== 'viewer'`, `hasRole(`, `roles: ['admin'`. */
const DECISION = new RegExp(
  `role\\s*[!=]==?\\s*'(${names})'|'(${names})'\\s*[!=]==?\\s*\\w*role|hasRole\\(|roles:\\s*\\[\\s*'(${names})'`,
);

describe('one permission table', () => {
  it('no client code or server service decides by a role name', () => {
    const offenders = [
      ...files(path.join(ROOT, 'src')),
      ...files(path.join(ROOT, 'server/services')),
      ...files(path.join(ROOT, 'server/routes')),
    ].flatMap((f) =>
      readFileSync(f, 'utf8')
        .split('\n')
        .map((line, i) => [line, i] as const)
        .filter(([line]) => DECISION.test(line))
        .map(([line, i]) => `${path.relative(ROOT, f)}:${i + 1}: ${line.trim()}`),
    );
    expect(offenders).toEqual([]);
  });

  it('the pattern catches what it is meant to', () => {
    expect(DECISION.test("if (user.role === 'lead')")).toBe(true);
    expect(DECISION.test("meta: { roles: ['admin'] }")).toBe(true);
    expect(DECISION.test('session.hasRole(x)')).toBe(true);
    expect(DECISION.test("roleCan(user.role, 'captures:tag')")).toBe(false);
  });
});
