/**
 * Sign-in throttling (common practice, e.g. OWASP's authentication guidance): failed attempts are
 * counted per e-mail + client address and per client address; when either budget is spent, every
 * attempt — even with the right password — is refused until the window ends. A success clears the
 * e-mail + address counter. In-memory: one process; a cluster would move this to a shared store.
 */
import { RateLimiterMemory, type RateLimiterRes } from "rate-limiter-flexible";
import { TooManyRequestsError } from "@/lib/domain/errors";

export const SIGNIN_LIMITS = {
  /** Failures per e-mail + address before a block. */
  perAccount: { points: 5, durationS: 15 * 60 },
  /** Failures per address (any account) before a block. */
  perAddress: { points: 50, durationS: 15 * 60 },
} as const;

interface Limiters {
  account: RateLimiterMemory;
  address: RateLimiterMemory;
}

const g = globalThis as typeof globalThis & { __rimguardSigninLimiters?: Limiters };

function limiters(): Limiters {
  g.__rimguardSigninLimiters ??= {
    account: new RateLimiterMemory({
      keyPrefix: "signin-account",
      points: SIGNIN_LIMITS.perAccount.points,
      duration: SIGNIN_LIMITS.perAccount.durationS,
    }),
    address: new RateLimiterMemory({
      keyPrefix: "signin-address",
      points: SIGNIN_LIMITS.perAddress.points,
      duration: SIGNIN_LIMITS.perAddress.durationS,
    }),
  };
  return g.__rimguardSigninLimiters;
}

const accountKey = (email: string, ip: string) => `${email.trim().toLowerCase()}|${ip}`;

export function throttleMessage(seconds: number): string {
  return `Too many attempts. Try again in ${seconds} s.`;
}

function blockedFor(res: RateLimiterRes | null, points: number): number | null {
  if (!res || res.consumedPoints < points) return null;
  return Math.max(1, Math.ceil(res.msBeforeNext / 1000));
}

/** Throws TooManyRequestsError when this e-mail + address or this address is blocked. */
export async function assertSignInAllowed(email: string, ip: string): Promise<void> {
  const l = limiters();
  const [acc, addr] = await Promise.all([l.account.get(accountKey(email, ip)), l.address.get(ip)]);
  const wait = Math.max(
    blockedFor(acc, SIGNIN_LIMITS.perAccount.points) ?? 0,
    blockedFor(addr, SIGNIN_LIMITS.perAddress.points) ?? 0,
  );
  if (wait > 0) throw new TooManyRequestsError(throttleMessage(wait), wait);
}

export async function recordSignInFailure(email: string, ip: string): Promise<void> {
  const l = limiters();
  // consume() rejects once the budget is spent; the block itself is read by assertSignInAllowed.
  await Promise.allSettled([l.account.consume(accountKey(email, ip)), l.address.consume(ip)]);
}

export async function recordSignInSuccess(email: string, ip: string): Promise<void> {
  await limiters().account.delete(accountKey(email, ip));
}

/** Forget every counter (tests). */
export function resetSignInThrottle(): void {
  g.__rimguardSigninLimiters = undefined;
}
