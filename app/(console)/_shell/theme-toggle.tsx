"use client";

import { useState } from "react";
import { THEME_COOKIE, type Theme } from "@/lib/theme";

/** Dark for walls, light for desks; remembered for a year in a cookie the server reads. */
export function ThemeToggle({ initial }: { initial: Theme }) {
  const [theme, setTheme] = useState<Theme>(initial);

  function toggle() {
    const next: Theme = theme === "dark" ? "light" : "dark";
    document.documentElement.dataset.theme = next;
    document.cookie = `${THEME_COOKIE}=${next}; path=/; max-age=31536000; samesite=lax`;
    setTheme(next);
  }

  return (
    <button
      type="button"
      onClick={toggle}
      aria-pressed={theme === "light"}
      className="rounded border border-line px-2 py-1 text-sm text-muted hover:text-ink"
      title="Switch between the dark wall theme and the light desk theme"
    >
      {theme === "dark" ? "Light theme" : "Dark theme"}
    </button>
  );
}
