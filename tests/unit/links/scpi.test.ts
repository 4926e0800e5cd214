/** The SCPI loop against a scripted fake instrument. */
import { describe, expect, it } from 'vitest';
import { createLineFramer } from '../../../shared/protocol/framing';
import { createLineQueue, createScpiClient, ScpiTimeoutError } from '../../../shared/protocol/scpi';

/** A fake instrument: answers each command with the next scripted reply bytes (or nothing). */
function fake(replies: (string | null)[]) {
  const lines = createLineQueue();
  const framer = createLineFramer({ terminator: 'auto' });
  const sent: string[] = [];
  return {
    sent,
    transport: {
      lines,
      async write(bytes: Uint8Array) {
        sent.push(new TextDecoder().decode(bytes));
        const r = replies.shift();
        if (r != null)
          setTimeout(
            () =>
              framer.push(Uint8Array.from(r, (c) => c.charCodeAt(0))).forEach((f) => lines.push(f)),
            1,
          );
      },
    },
  };
}

describe('SCPI client', () => {
  it('sends the command with an LF and returns the reply line', async () => {
    const f = fake(['Driftbench Labs,SIM-CNT-1,SN1,1.0.0\r\n']);
    const c = createScpiClient(f.transport);
    expect(await c.query('*IDN?')).toBe('Driftbench Labs,SIM-CNT-1,SN1,1.0.0');
    expect(f.sent).toEqual(['*IDN?\n']);
  });

  it('discards a garbage reply and retries the query', async () => {
    const f = fake(['+1.6\u00ff00E+07\r\n', '+1.600000000000E+07\r\n']);
    const c = createScpiClient(f.transport, { timeoutMs: 50 });
    expect(await c.query('READ?')).toBe('+1.600000000000E+07');
    expect(f.sent).toHaveLength(2);
  });

  it('retries after a timeout and gives up with the lines it threw away', async () => {
    const f = fake([null, 'junk\r\n', null]);
    const c = createScpiClient(f.transport, { timeoutMs: 20, retries: 2 });
    const err = await c.query('READ?', { accept: (fr) => fr.text.startsWith('+') }).catch((e) => e);
    expect(err).toBeInstanceOf(ScpiTimeoutError);
    expect(err.attempts).toBe(3);
    expect(err.discarded).toEqual(['junk']);
  });

  it('drains stale lines before each query so replies stay paired', async () => {
    const f = fake(['+2\r\n']);
    f.transport.lines.push({ text: '+1', bytes: new Uint8Array(), flags: 0 }); // a late reply
    const c = createScpiClient(f.transport);
    expect(await c.query('READ?')).toBe('+2');
  });

  it('serialises concurrent queries', async () => {
    const f = fake(['A\r\n', 'B\r\n']);
    const c = createScpiClient(f.transport);
    const [a, b] = await Promise.all([c.query('Q1?'), c.query('Q2?')]);
    expect([a, b]).toEqual(['A', 'B']);
  });

  it('polls at an interval until aborted', async () => {
    const f = fake(Array.from({ length: 10 }, (_, i) => `+${i}\r\n`));
    const c = createScpiClient(f.transport);
    const ac = new AbortController();
    const got: string[] = [];
    const t0 = Date.now();
    for await (const r of c.poll('READ?', { intervalMs: 20, signal: ac.signal })) {
      got.push(r.frame!.text);
      if (got.length === 3) ac.abort();
    }
    expect(got).toEqual(['+0', '+1', '+2']);
    expect(Date.now() - t0).toBeGreaterThanOrEqual(38);
  });
});
