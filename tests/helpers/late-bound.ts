/**
 * The holder a `setUp…` test helper returns: its hooks fill local variables in beforeAll, and
 * the tests read them through this object once the hooks ran. Reading one that is still unset
 * (not asked for, or its start-up failed) throws and names it.
 */
export function lateBound<T extends object>(what: string, read: () => Partial<T>): T {
  return new Proxy({} as T, {
    get(_target, key) {
      const value = (read() as Record<string | symbol, unknown>)[key];
      if (value === undefined) throw new Error(`${what}: ${String(key)} is not set up (not asked for, or its start-up failed)`);
      return value;
    },
  });
}
