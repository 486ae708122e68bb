/** Show several results (tables and figures) in one call. */
export function showAll(...items: { show(): void }[]): void {
  for (const it of items) it.show();
}
