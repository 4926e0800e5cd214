import { vi } from 'vitest';

/** A fetch stub answering each call with the next queued JSON response. */
export function queueFetch(...answers: Array<{ status?: number; body?: unknown } | Error>) {
  const fetchMock = vi.fn(async (_url: string, _init?: RequestInit) => {
    const next = answers.shift();
    if (!next) throw new Error('unexpected fetch');
    if (next instanceof Error) throw next;
    const status = next.status ?? 200;
    return new Response(next.body === undefined ? '' : JSON.stringify(next.body), {
      status,
      headers: { 'Content-Type': 'application/json' },
    });
  });
  vi.stubGlobal('fetch', fetchMock);
  return fetchMock;
}

export const technician = {
  id: 7,
  email: 'technician@kestrelbay.example',
  name: 'Tomas Reyes',
  role: 'technician' as const,
};

export const admin = {
  id: 1,
  email: 'admin@kestrelbay.example',
  name: 'Ada Marsh',
  role: 'admin' as const,
};
