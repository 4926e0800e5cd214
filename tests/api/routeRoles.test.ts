import { describe, expect, it } from 'vitest';
import request from 'supertest';
import type { Express } from 'express';
import { useDemoApp } from '../helpers/demoApp.js';
import {
  ROLES,
  ROUTE_RULES,
  ROUTES,
  roleCan,
  type Permission,
  type Role,
} from '../../shared/protocol/roles.js';

// Issue 10, "Also": the route × role test, generated from the one permission table the server
// enforces (shared/protocol/roles.ts ROUTES, applied by guardRoutes). Every route registered on
// the server must have a line in the table, so a new route without a rule fails here.
const demo = useDemoApp();

interface LayerLike {
  route?: { path: string | string[]; methods: Record<string, boolean> };
  handle?: { stack?: LayerLike[] };
  rawPath?: string;
}

/** Every `METHOD /path` registered under /api, read from Express's own router stack. */
function registeredRoutes(app: Express): string[] {
  const out: string[] = [];
  const walk = (stack: LayerLike[], prefix: string) => {
    for (const layer of stack) {
      if (layer.route) {
        const paths = Array.isArray(layer.route.path) ? layer.route.path : [layer.route.path];
        for (const p of paths) {
          const full = `${prefix}${p}`.replace(/\/$/, '') || '/';
          for (const m of Object.keys(layer.route.methods))
            if (m !== '_all') out.push(`${m.toUpperCase()} ${full}`);
        }
      } else if (layer.handle?.stack) {
        const mount =
          typeof layer.rawPath === 'string' && layer.rawPath !== '/' ? layer.rawPath : '';
        walk(layer.handle.stack, prefix + mount);
      }
    }
  };
  const root = (app as unknown as { router: { stack: LayerLike[] } }).router.stack;
  const api = root.find((l) => l.rawPath === '/api' && l.handle?.stack);
  if (!api) throw new Error('the /api router was not found');
  walk(api.handle!.stack!, '/api');
  return [...new Set(out)];
}

/** Whether a role may call a route according to the table (the expectation, not the server). */
function allowed(access: string, role: Role): boolean {
  if (access === 'public' || access === 'signed-in') return true;
  return roleCan(role, access as Permission);
}

const concrete = (path: string) =>
  path.replace(/:[A-Za-z]+/g, (m) => (m === ':key' ? 'no-such-key' : '1'));

describe('the permission table', () => {
  it('has a rule for every route the server registers, and a route for every rule', () => {
    const registered = registeredRoutes(demo.t.app);
    expect(registered.length).toBeGreaterThan(20);
    const missing = registered.filter((r) => !(r in ROUTES));
    expect(
      missing,
      `routes without a line in shared/protocol/roles.ts ROUTES: ${missing.join(', ')}`,
    ).toEqual([]);
    const stale = Object.keys(ROUTES).filter((k) => !registered.includes(k));
    expect(stale, `rules for routes that do not exist: ${stale.join(', ')}`).toEqual([]);
  });

  it('answers 401 to every route but the public ones without a token', async () => {
    for (const rule of ROUTE_RULES) {
      const res = await request(demo.t.app)
        [rule.method.toLowerCase() as 'get'](concrete(rule.path))
        .send();
      if (rule.permission === 'public') expect(res.status, rule.key).not.toBe(401);
      else expect(res.status, rule.key).toBe(401);
    }
  });

  // Sign-out ends the session, so it runs last.
  const order = [...ROUTE_RULES].sort(
    (a, b) => Number(a.key === 'POST /api/auth/logout') - Number(b.key === 'POST /api/auth/logout'),
  );
  for (const rule of order) {
    if (rule.permission === 'public') continue;
    it(`${rule.key} (${rule.permission}): 403 exactly for the roles without it`, async () => {
      for (const role of ROLES) {
        const res = await request(demo.t.app)
          [rule.method.toLowerCase() as 'get'](concrete(rule.path))
          .set(await demo.auth(role))
          .send(rule.method === 'GET' || rule.method === 'DELETE' ? undefined : {});
        const label = `${rule.key} as ${role}: ${res.status} ${JSON.stringify(res.body?.error ?? '')}`;
        expect(res.status, label).toBeLessThan(500);
        expect(res.status, label).not.toBe(401);
        if (allowed(rule.permission, role)) {
          expect(res.body?.error?.code === 'forbidden' && res.status === 403, label).toBe(false);
          expect(String(res.body?.error?.message ?? '').startsWith('Route '), label).toBe(false);
        } else {
          expect(res.status, label).toBe(403);
        }
      }
    });
  }
});
