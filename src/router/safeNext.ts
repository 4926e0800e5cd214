/**
 * Only same-app paths may be used as the after-sign-in destination. Its own module so the pages
 * the router lazy-loads (sign-in, change password) never import the router back.
 */
export function safeNext(value: unknown): string {
  return typeof value === 'string' && value.startsWith('/') && !value.startsWith('//')
    ? value
    : '/';
}
