/**
 * Sign-in limits: failed attempts only, counted per address and per account in a sliding-free
 * fixed window. A successful sign-in does not count, and clears its account's failures (the
 * right password was known), so normal use never meets the limit; an attacker spreading guesses
 * over many addresses still meets the account's limit. Kept in memory: one server process.
 */
export interface LoginLimitOptions {
  windowMs: number;
  /** Failures one address may make per window. */
  perAddress: number;
  /** Failures one account may receive per window, from any address. */
  perAccount: number;
}

interface Bucket {
  count: number;
  resetAt: number;
}

export class LoginLimiter {
  private readonly buckets = new Map<string, Bucket>();

  constructor(
    readonly opts: LoginLimitOptions,
    private readonly now: () => number = Date.now,
  ) {}

  private bucket(key: string): Bucket | undefined {
    const b = this.buckets.get(key);
    if (b && b.resetAt <= this.now()) {
      this.buckets.delete(key);
      return undefined;
    }
    return b;
  }

  /** Seconds until the caller may try again, or 0 when neither the address nor the account is blocked. */
  blockedFor(address: string, account: string): number {
    const now = this.now();
    let wait = 0;
    const a = this.bucket(`ip:${address}`);
    if (a && a.count >= this.opts.perAddress) wait = Math.max(wait, a.resetAt - now);
    const u = this.bucket(`user:${account}`);
    if (u && u.count >= this.opts.perAccount) wait = Math.max(wait, u.resetAt - now);
    return Math.ceil(wait / 1000);
  }

  recordFailure(address: string, account: string): void {
    for (const key of [`ip:${address}`, `user:${account}`]) {
      const b = this.bucket(key);
      if (b) b.count++;
      else this.buckets.set(key, { count: 1, resetAt: this.now() + this.opts.windowMs });
    }
    if (this.buckets.size > 50_000) this.sweep();
  }

  recordSuccess(account: string): void {
    this.buckets.delete(`user:${account}`);
  }

  private sweep(): void {
    const now = this.now();
    for (const [k, b] of this.buckets) if (b.resetAt <= now) this.buckets.delete(k);
  }
}
