/**
 * How a WebSocket (the live feed `/ws`, the simulators `/sim/*`) carries the sign-in token: in
 * the `Sec-WebSocket-Protocol` header, never in the URL (URLs end up in logs and histories).
 * The browser offers two subprotocols — `driftbench.v1` and `driftbench.token.<jwt>` — and the
 * server answers with `driftbench.v1` only, so the token is never echoed back.
 */

export const WS_PROTOCOL = 'driftbench.v1';
export const WS_TOKEN_PREFIX = 'driftbench.token.';

/** The subprotocols a client offers when signed in with `token`. */
export function socketProtocols(token: string | null | undefined): string[] {
  return token ? [WS_PROTOCOL, `${WS_TOKEN_PREFIX}${token}`] : [WS_PROTOCOL];
}

/** The token offered in a `Sec-WebSocket-Protocol` header value, or null. */
export function tokenFromProtocolHeader(header: string | string[] | undefined): string | null {
  const value = Array.isArray(header) ? header.join(',') : (header ?? '');
  for (const part of value.split(',')) {
    const p = part.trim();
    if (p.startsWith(WS_TOKEN_PREFIX) && p.length > WS_TOKEN_PREFIX.length)
      return p.slice(WS_TOKEN_PREFIX.length);
  }
  return null;
}
