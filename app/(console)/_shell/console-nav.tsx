"use client";

import Link from "next/link";
import { usePathname } from "next/navigation";

export interface NavLink {
  href: string;
  label: string;
}

function isActive(pathname: string, href: string): boolean {
  if (href === "/") return pathname === "/" || pathname.startsWith("/wall");
  return pathname === href || pathname.startsWith(`${href}/`);
}

export function ConsoleNav({ links }: { links: NavLink[] }) {
  const pathname = usePathname() ?? "/";
  return (
    <nav aria-label="Console">
      <ul className="flex flex-wrap items-center gap-1">
        {links.map((l) => {
          const active = isActive(pathname, l.href);
          return (
            <li key={l.href}>
              <Link
                href={l.href}
                aria-current={active ? "page" : undefined}
                className={`block rounded px-3 py-1.5 text-sm ${
                  active ? "bg-raised font-medium text-ink underline decoration-accent decoration-2 underline-offset-[6px]" : "text-muted hover:bg-raised hover:text-ink"
                }`}
              >
                {l.label}
              </Link>
            </li>
          );
        })}
      </ul>
    </nav>
  );
}
