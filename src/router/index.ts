import {
  createRouter,
  createWebHistory,
  type RouteLocationRaw,
  type RouteRecordRaw,
  type Router,
  type RouterHistory,
} from 'vue-router';
import type { Permission } from '../../shared/protocol/roles';
import { useSessionStore } from '../stores/session';
import { safeNext } from './safeNext';

export { safeNext };

declare module 'vue-router' {
  interface RouteMeta {
    /** Page title, used for the document title. */
    title?: string;
    /** Reachable without signing in (rendered without the shell). */
    public?: boolean;
    /**
     * The permission (shared/protocol/roles.ts, the table the server enforces) a role needs to
     * open the page; everyone signed in when absent. The nav rail reads the same field.
     */
    permission?: Permission;
    /** Signed in, but rendered without the shell (the printable report). */
    bare?: boolean;
  }
}

export const routes: RouteRecordRaw[] = [
  {
    path: '/sign-in',
    name: 'sign-in',
    component: () => import('../views/SignInView.vue'),
    meta: { title: 'Sign in', public: true },
  },
  {
    // After an admin reset: the only page that opens until a new password is chosen.
    path: '/account/password',
    name: 'change-password',
    component: () => import('../views/ChangePasswordView.vue'),
    meta: { title: 'Choose a new password', bare: true },
  },
  {
    path: '/',
    name: 'dashboard',
    component: () => import('../views/DashboardView.vue'),
    meta: { title: 'Dashboard' },
  },
  {
    path: '/studies',
    name: 'studies',
    component: () => import('../views/StudiesView.vue'),
    meta: { title: 'Studies' },
  },
  {
    path: '/studies/:id(\\d+)',
    name: 'study',
    component: () => import('../views/StudyView.vue'),
    props: (route) => ({ id: Number(route.params.id) }),
    meta: { title: 'Study' },
  },
  {
    path: '/studies/:id(\\d+)/report',
    name: 'study-report',
    component: () => import('../views/StudyReportView.vue'),
    props: (route) => ({ id: Number(route.params.id) }),
    meta: { title: 'Study report', bare: true },
  },
  {
    path: '/lab',
    name: 'lab',
    component: () => import('../views/LabView.vue'),
    meta: { title: 'Lab' },
  },
  {
    path: '/lab/instruments/:id(\\d+)',
    name: 'instrument',
    component: () => import('../views/InstrumentView.vue'),
    props: (route) => ({ id: Number(route.params.id) }),
    meta: { title: 'Instrument' },
  },
  {
    path: '/lab/references/:id(\\d+)',
    name: 'reference',
    component: () => import('../views/ReferenceView.vue'),
    props: (route) => ({ id: Number(route.params.id) }),
    meta: { title: 'Reference' },
  },
  {
    path: '/bench',
    name: 'bench',
    component: () => import('../views/BenchView.vue'),
    meta: { title: 'Bench', permission: 'captures:run' },
  },
  {
    path: '/captures',
    name: 'captures',
    component: () => import('../views/CapturesView.vue'),
    meta: { title: 'Captures' },
  },
  {
    path: '/captures/import',
    name: 'capture-import',
    component: () => import('../views/CaptureImportView.vue'),
    meta: { title: 'Import readings', permission: 'captures:run' },
  },
  {
    path: '/compare',
    name: 'compare',
    component: () => import('../views/CompareView.vue'),
    meta: { title: 'Compare' },
  },
  {
    path: '/captures/:id(\\d+)',
    name: 'capture',
    component: () => import('../views/CaptureView.vue'),
    props: (route) => ({ id: Number(route.params.id) }),
    meta: { title: 'Capture' },
  },
  {
    path: '/captures/:id(\\d+)/live',
    name: 'capture-live',
    component: () => import('../views/CaptureLiveView.vue'),
    props: (route) => ({
      id: Number(route.params.id),
      mode: route.query.mode === 'replay' ? 'replay' : 'watch',
    }),
    meta: { title: 'Live view' },
  },
  {
    path: '/links',
    name: 'links',
    component: () => import('../views/LinksView.vue'),
    meta: { title: 'Links' },
  },
  {
    path: '/users',
    name: 'users',
    component: () => import('../views/UsersView.vue'),
    meta: { title: 'Users', permission: 'users:manage' },
  },
  {
    path: '/outbox',
    name: 'outbox',
    component: () => import('../views/OutboxView.vue'),
    meta: { title: 'Outbox', permission: 'outbox:read' },
  },
  {
    path: '/help',
    name: 'help',
    component: () => import('../views/HelpView.vue'),
    meta: { title: 'Help' },
  },
  {
    path: '/no-access',
    name: 'forbidden',
    component: () => import('../views/NotFoundView.vue'),
    props: { reason: 'forbidden' },
    meta: { title: 'Not available' },
  },
  {
    path: '/:pathMatch(.*)*',
    name: 'not-found',
    component: () => import('../views/NotFoundView.vue'),
    meta: { title: 'Page not found' },
  },
];

export function createAppRouter(history: RouterHistory = createWebHistory()): Router {
  const router = createRouter({ history, routes, scrollBehavior: () => ({ top: 0 }) });

  router.beforeEach(async (to): Promise<boolean | RouteLocationRaw> => {
    const session = useSessionStore();
    if (to.meta.public) {
      if (to.name === 'sign-in' && session.isAuthenticated && session.verified) {
        return safeNext(to.query.next);
      }
      return true;
    }
    const next = to.fullPath === '/' ? undefined : to.fullPath;
    if (!session.token) return { name: 'sign-in', query: { next } };
    const ended = await session.restore();
    if (ended)
      return {
        name: 'sign-in',
        query: { next, reason: ended === 'signed-out' ? undefined : ended },
      };
    if (session.mustChangePassword && to.name !== 'change-password')
      return { name: 'change-password', query: { next } };
    if (!session.mustChangePassword && to.name === 'change-password') return { name: 'dashboard' };
    if (to.meta.permission && !session.can(to.meta.permission)) return { name: 'forbidden' };
    return true;
  });

  router.afterEach((to) => {
    document.title = to.meta.title ? `${to.meta.title} · Driftbench` : 'Driftbench';
  });

  // The session store hears when an API call finds the session over and signs out; the router
  // only listens, sending the user to sign in, then back here.
  useSessionStore().onSessionEnded((reason) => {
    const current = router.currentRoute.value;
    if (current.meta.public) return;
    void router.replace({ name: 'sign-in', query: { next: current.fullPath, reason } });
  });

  return router;
}
