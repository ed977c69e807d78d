import type { Metadata, Viewport } from "next";
import { cookies } from "next/headers";
import { parseTheme, THEME_COOKIE } from "@/lib/theme";
import { ZodJitless } from "./_components/zod-jitless";
import { inter, mono } from "./fonts";
import "./globals.css";

export const metadata: Metadata = {
  title: { default: "Rimguard", template: "%s · Rimguard" },
  description: "Live loop health: identified dynamics, closed-loop poles and rim distance, advisory only.",
  robots: { index: false, follow: false },
};

export const viewport: Viewport = {
  themeColor: [
    { media: "(prefers-color-scheme: dark)", color: "#20252b" },
    { media: "(prefers-color-scheme: light)", color: "#eceff2" },
  ],
};

export default async function RootLayout({ children }: { children: React.ReactNode }) {
  const theme = parseTheme((await cookies()).get(THEME_COOKIE)?.value);
  return (
    <html lang="en" data-theme={theme} className={`${inter.variable} ${mono.variable}`}>
      <body className="min-h-screen bg-ground text-ink antialiased">
        <ZodJitless />
        {children}
      </body>
    </html>
  );
}
