// @vitest-environment happy-dom
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { createPinia, setActivePinia } from 'pinia';
import { createMemoryHistory, type Router } from 'vue-router';
import { createAppRouter } from '../../../src/router';
import { navItemsFor } from '../../../src/router/navigation';
import { http } from '../../../src/api/http';
import { SESSION_KEY } from '../../../src/stores/session';
import { admin, queueFetch, technician } from './helpers';
import { ROLES, roleCan } from '../../../shared/protocol/roles';

async function routerAt(path: string): Promise<Router> {
  const router = createAppRouter(createMemoryHistory());
  await router.push(path);
  await router.isReady();
  return router;
}

describe('router guard', () => {
  beforeEach(() => {
    localStorage.clear();
    setActivePinia(createPinia());
  });
  afterEach(() => vi.unstubAllGlobals());

  it('sends a signed-out visitor to sign-in with the page to come back to', async () => {
    const router = await routerAt('/studies');
    expect(router.currentRoute.value.name).toBe('sign-in');
    expect(router.currentRoute.value.query.next).toBe('/studies');
  });

  it('lets a signed-in technician open the lab', async () => {
    localStorage.setItem(SESSION_KEY, JSON.stringify({ token: 't', user: technician }));
    queueFetch({ body: { user: technician } });
    const router = await routerAt('/lab');
    expect(router.currentRoute.value.name).toBe('lab');
  });

  it('keeps a technician out of the admin-only users page', async () => {
    localStorage.setItem(SESSION_KEY, JSON.stringify({ token: 't', user: technician }));
    queueFetch({ body: { user: technician } });
    const router = await routerAt('/users');
    expect(router.currentRoute.value.name).toBe('forbidden');
  });

  it('lets an admin open users', async () => {
    localStorage.setItem(SESSION_KEY, JSON.stringify({ token: 't', user: admin }));
    queueFetch({ body: { user: admin } });
    const router = await routerAt('/users');
    expect(router.currentRoute.value.name).toBe('users');
  });

  it('sends an expired stored session to sign-in with the reason', async () => {
    localStorage.setItem(SESSION_KEY, JSON.stringify({ token: 'old', user: technician }));
    queueFetch({ status: 401, body: { error: { code: 'token-expired', message: 'Expired' } } });
    const router = await routerAt('/studies');
    expect(router.currentRoute.value.name).toBe('sign-in');
    expect(router.currentRoute.value.query).toMatchObject({ next: '/studies', reason: 'expired' });
  });

  it('shows the not-found page for an unknown path once signed in', async () => {
    localStorage.setItem(SESSION_KEY, JSON.stringify({ token: 't', user: technician }));
    queueFetch({ body: { user: technician } });
    const router = await routerAt('/no/such/page');
    expect(router.currentRoute.value.name).toBe('not-found');
  });

  it('signs out and redirects when an API call finds the token expired', async () => {
    localStorage.setItem(SESSION_KEY, JSON.stringify({ token: 't', user: technician }));
    queueFetch(
      { body: { user: technician } },
      { status: 401, body: { error: { code: 'token-expired', message: 'Expired' } } },
    );
    const router = await routerAt('/lab');

    await http.get('/api/instruments').catch(() => undefined);
    await vi.waitFor(() => expect(router.currentRoute.value.name).toBe('sign-in'));

    expect(router.currentRoute.value.query).toMatchObject({ next: '/lab', reason: 'expired' });
    expect(localStorage.getItem(SESSION_KEY)).toBeNull();
  });

  it('shows Users and Outbox to admins only and Bench to everyone who captures', () => {
    const router = createAppRouter(createMemoryHistory());
    expect(navItemsFor(router, 'admin').map((i) => i.label)).toEqual([
      'Dashboard',
      'Studies',
      'Bench',
      'Captures',
      'Compare',
      'Links',
      'Lab',
      'Users',
      'Outbox',
      'Help',
    ]);
    expect(navItemsFor(router, 'technician').map((i) => i.label)).toEqual([
      'Dashboard',
      'Studies',
      'Bench',
      'Captures',
      'Compare',
      'Links',
      'Lab',
      'Help',
    ]);
    expect(navItemsFor(router, 'viewer').map((i) => i.label)).toEqual([
      'Dashboard',
      'Studies',
      'Captures',
      'Compare',
      'Links',
      'Lab',
      'Help',
    ]);
  });

  it('gates pages by the permission table the server enforces', () => {
    const router = createAppRouter(createMemoryHistory());
    const gated = router.getRoutes().filter((r) => r.meta.permission);
    expect(gated.map((r) => r.name).sort()).toEqual(['bench', 'capture-import', 'outbox', 'users']);
    for (const r of gated) {
      for (const role of ROLES) {
        const shown = navItemsFor(router, role).some((i) => i.to.name === r.name);
        const onRail = navItemsFor(router, 'admin').some((i) => i.to.name === r.name);
        if (onRail)
          expect(shown, `${String(r.name)} for ${role}`).toBe(roleCan(role, r.meta.permission!));
      }
    }
  });

  it('lets a lead open the bench and keeps a viewer out, as the server table says', async () => {
    localStorage.setItem(
      SESSION_KEY,
      JSON.stringify({ token: 't', user: { ...technician, role: 'viewer' } }),
    );
    queueFetch({ body: { user: { ...technician, role: 'viewer' } } });
    expect((await routerAt('/bench')).currentRoute.value.name).toBe('forbidden');
    setActivePinia(createPinia());
    localStorage.setItem(
      SESSION_KEY,
      JSON.stringify({ token: 't', user: { ...technician, role: 'lead' } }),
    );
    queueFetch({ body: { user: { ...technician, role: 'lead' } } });
    expect((await routerAt('/bench')).currentRoute.value.name).toBe('bench');
  });
});
