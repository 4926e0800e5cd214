import { computed, ref } from 'vue';
import { defineStore } from 'pinia';
import {
  changePassword as postPasswordChange,
  fetchMe,
  login,
  logout as postLogout,
  type Role,
  type SessionUser,
} from '../api/auth';
import { ApiError, configureHttp } from '../api/http';
import { configureSimulatorToken } from '../links/simulatorLink';
import { roleCan, type Permission } from '../../shared/protocol/permissions';

export const SESSION_KEY = 'driftbench.session';

/** Why a session ended; the sign-in page turns this into a sentence. */
export type SessionEndReason = 'expired' | 'disabled' | 'signed-out' | 'ended';

interface StoredSession {
  token: string;
  user: SessionUser | null;
  mustChangePassword?: boolean;
}

function readStored(): StoredSession | null {
  let raw: string | null = null;
  try {
    raw = localStorage.getItem(SESSION_KEY);
  } catch {
    return null;
  }
  if (!raw) return null;
  try {
    const parsed = JSON.parse(raw) as Partial<StoredSession>;
    if (typeof parsed.token === 'string')
      return {
        token: parsed.token,
        user: parsed.user ?? null,
        mustChangePassword: parsed.mustChangePassword === true,
      };
  } catch {
    // A bare token (e.g. put there by a test) is accepted too; /me supplies the user.
  }
  return { token: raw, user: null };
}

function writeStored(session: StoredSession | null): void {
  try {
    if (session) localStorage.setItem(SESSION_KEY, JSON.stringify(session));
    else localStorage.removeItem(SESSION_KEY);
  } catch {
    // Private mode or full storage: the session simply lasts until the tab closes.
  }
}

export function reasonFor(error: ApiError): SessionEndReason {
  if (error.code === 'account-disabled') return 'disabled';
  return error.code === 'session-ended' ? 'ended' : 'expired';
}

export const useSessionStore = defineStore('session', () => {
  const stored = readStored();
  const token = ref<string | null>(stored?.token ?? null);
  const user = ref<SessionUser | null>(stored?.user ?? null);
  /** After an admin reset: the app shows only the change-password screen until a new one is set. */
  const mustChangePassword = ref(stored?.mustChangePassword ?? false);
  /** True once /me has confirmed the token in this page load. */
  const verified = ref(false);
  let restoring: Promise<SessionEndReason | null> | null = null;

  /** Who hears that an API call found the session over (the router, to send the user to sign in). */
  const endedListeners = new Set<(reason: SessionEndReason) => void>();
  function onSessionEnded(listener: (reason: SessionEndReason) => void): () => void {
    endedListeners.add(listener);
    return () => endedListeners.delete(listener);
  }

  configureHttp({
    getToken: () => token.value,
    onSessionLost: (error) => {
      if (!token.value) return;
      signOut();
      const reason = reasonFor(error);
      for (const listener of endedListeners) listener(reason);
    },
  });
  configureSimulatorToken(() => token.value);

  const isAuthenticated = computed(() => token.value !== null && user.value !== null);
  const role = computed<Role | null>(() => user.value?.role ?? null);

  /** Whether the signed-in role holds a permission (the server's own table; it enforces it). */
  function can(permission: Permission): boolean {
    return role.value !== null && roleCan(role.value, permission);
  }

  function setSession(newToken: string, newUser: SessionUser, mustChange = false): void {
    token.value = newToken;
    user.value = newUser;
    mustChangePassword.value = mustChange;
    verified.value = true;
    writeStored({ token: newToken, user: newUser, mustChangePassword: mustChange });
  }

  async function signIn(email: string, password: string): Promise<SessionUser> {
    const answer = await login(email.trim(), password);
    setSession(answer.token, answer.user, answer.mustChangePassword === true);
    return answer.user;
  }

  /** Forgets the session in this browser (the server's side is `logout`). */
  function signOut(): void {
    token.value = null;
    user.value = null;
    mustChangePassword.value = false;
    verified.value = false;
    restoring = null;
    writeStored(null);
  }

  /** Signs out on the server too, so the token cannot be used again; the browser forgets it either way. */
  async function logout(): Promise<void> {
    if (token.value) await postLogout().catch(() => {});
    signOut();
  }

  /** Changes the password; the fresh token replaces the old one (which the server revoked). */
  async function changePassword(currentPassword: string, newPassword: string): Promise<void> {
    const answer = await postPasswordChange(currentPassword, newPassword);
    setSession(answer.token, answer.user, false);
  }

  /**
   * Confirm a stored token with /me (once per page load). Resolves to null when the session is
   * good, or to the reason it ended. A network failure keeps a stored user so the shell can
   * still show a readable error on each page.
   */
  function restore(): Promise<SessionEndReason | null> {
    if (!token.value) return Promise.resolve('signed-out');
    if (verified.value) return Promise.resolve(null);
    restoring ??= (async () => {
      try {
        const { user: me, mustChangePassword: mustChange } = await fetchMe();
        user.value = me;
        mustChangePassword.value = mustChange === true;
        verified.value = true;
        writeStored({
          token: token.value as string,
          user: me,
          mustChangePassword: mustChangePassword.value,
        });
        return null;
      } catch (error) {
        if (error instanceof ApiError && error.status === 401) {
          signOut();
          return reasonFor(error);
        }
        restoring = null;
        return user.value ? null : 'expired';
      }
    })();
    return restoring;
  }

  return {
    token,
    user,
    verified,
    mustChangePassword,
    isAuthenticated,
    role,
    can,
    signIn,
    signOut,
    logout,
    changePassword,
    restore,
    onSessionEnded,
  };
});
