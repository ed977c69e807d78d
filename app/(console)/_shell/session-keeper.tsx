"use client";

import { useEffect } from "react";

/** How often the shell checks that the session still stands (ms). */
const CHECK_MS = 60_000;
/** How often the session cookie is renewed while the console is open (sliding expiry, ms). */
const RENEW_MS = 5 * 60_000;

/**
 * Keeps an open console honest about its session: the cookie is renewed while the page is open
 * (a wall stays signed in through a shift), and when the server no longer accepts the session
 * (expired, signed out elsewhere, access withdrawn) the page goes to the sign-in form instead of
 * showing data that silently stopped updating.
 */
export function SessionKeeper() {
  useEffect(() => {
    let stopped = false;
    const toSignIn = () => {
      if (stopped) return;
      stopped = true;
      const back = `${window.location.pathname}${window.location.search}`;
      // A full load on purpose: the page's live state belongs to a session that has ended.
      // eslint-disable-next-line @next/next/no-location-assign-relative-destination
      window.location.assign(`/signin?error=SessionRequired&callbackUrl=${encodeURIComponent(back)}`);
    };
    const check = async () => {
      try {
        const res = await fetch("/api/session", { cache: "no-store" });
        if (res.status === 401) toSignIn();
      } catch {
        // Network trouble is not a signed-out session; the next check decides.
      }
    };
    const renew = () => void fetch("/api/auth/session", { cache: "no-store" }).catch(() => undefined);
    const c = window.setInterval(() => void check(), CHECK_MS);
    const r = window.setInterval(renew, RENEW_MS);
    const onVisible = () => {
      if (document.visibilityState === "visible") void check();
    };
    document.addEventListener("visibilitychange", onVisible);
    return () => {
      stopped = true;
      window.clearInterval(c);
      window.clearInterval(r);
      document.removeEventListener("visibilitychange", onVisible);
    };
  }, []);
  return null;
}
