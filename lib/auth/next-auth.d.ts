import "next-auth";
import "next-auth/jwt";

declare module "next-auth" {
  interface Session {
    user: { id: number; name: string; email: string };
    /** The tenant the session works in (rights are re-read from the database per request). */
    tenantId: number;
  }
}

declare module "next-auth/jwt" {
  interface JWT {
    uid?: number;
    tid?: number;
    /** users.session_version at sign-in; a newer version in the database ends the session. */
    sv?: number;
    /** Our own session id, kept across token refreshes; signing out revokes it. */
    sid?: string;
  }
}
