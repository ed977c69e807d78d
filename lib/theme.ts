/** The console theme: dark for walls (default), light for desks; kept in a cookie so the server renders it. */
export const THEME_COOKIE = "rg-theme";
export type Theme = "dark" | "light";
export function parseTheme(value: string | undefined | null): Theme {
  return value === "light" ? "light" : "dark";
}
