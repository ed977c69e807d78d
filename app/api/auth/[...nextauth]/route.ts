import NextAuth from "next-auth";
import { getAuthOptions } from "@/lib/auth/options";

type RouteContext = { params: Promise<{ nextauth: string[] }> };

async function handler(req: Request, context: RouteContext): Promise<Response> {
  // NextAuth(options) returns the App Router handler when called with (req, context).
  const nextAuth = NextAuth(getAuthOptions()) as unknown as (req: Request, ctx: RouteContext) => Promise<Response>;
  return nextAuth(req, context);
}

export { handler as GET, handler as POST };
