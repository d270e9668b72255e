import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { routeRules } from '../../src/lib/server/auth/access';

// The README's JSON API table is the scripts' reference: every JSON route of the route table, with
// each of its methods, must be written there (route parameters as {name}).
const readme = readFileSync(new URL('../../README.md', import.meta.url), 'utf8');
const apiSection = readme.slice(readme.indexOf('## JSON API'), readme.indexOf('## Cautions'));
const lines = apiSection.split('\n').filter((l) => l.startsWith('|'));

const apiRoutes = Object.entries(routeRules).filter(([pattern]) => pattern.startsWith('/api/'));

describe('README JSON API table', () => {
  it('has a JSON API section with a table', () => {
    expect(apiSection.length).toBeGreaterThan(100);
    expect(lines.length).toBeGreaterThan(10);
  });

  it.each(apiRoutes)('names %s with each of its methods', (pattern, methods) => {
    const written = pattern.replace(/\[(\w+)\]/g, '{$1}');
    // A path is named when it appears followed by a query, a space, a backtick or the end of a cell.
    const named = new RegExp(`${written.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}(?=[\\[?\` ]|$)`);
    const rows = lines.filter((l) => named.test(l));
    expect(rows, `${written} is not in the README's JSON API table`).not.toHaveLength(0);
    for (const method of Object.keys(methods)) {
      expect(rows.some((r) => r.includes(method)), `${method} ${written} is not in the README's JSON API table`).toBe(true);
    }
  });
});
