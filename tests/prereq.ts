/**
 * Which test groups that need system programs may run (scripts/prerequisites.mjs). Under `npm test`
 * the runner has already looked (SILL_TEST_SKIP) and prints the skipped groups in its last line;
 * run directly (`npx vitest …`) the check is made here. In CI (CI=true) every group runs, so a
 * missing program fails its tests instead of skipping them.
 */
import { GROUPS, paths, skippedByRunner, type Group } from '../scripts/prerequisites.mjs';

export const PYTHON = paths.python();
export const CHROMIUM = paths.chromium();

const ci = process.env.CI === 'true' || process.env.CI === '1';
const known = new Map<string, boolean>();

/** True when the tests of group `id` should run here. */
export function runs(id: Group['id']): boolean {
  if (ci) return true;
  const skipped = skippedByRunner();
  if (skipped) return !skipped.includes(id);
  if (!known.has(id)) known.set(id, GROUPS.find((g) => g.id === id)!.missing() === null);
  return known.get(id)!;
}

/** A note for a skipped test's title: why it does not run. */
export function skipNote(id: Group['id']): string {
  if (runs(id)) return '';
  const g = GROUPS.find((x) => x.id === id)!;
  return ` (skipped: ${g.missing() ?? 'not found by the test runner'}; apt-get install -y ${g.packages.join(' ')})`;
}
