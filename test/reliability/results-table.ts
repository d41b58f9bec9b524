/**
 * The reliability table as text: one line per scenario (result, seconds, what was checked), its figures
 * under it, and the failed checks of a failed row.
 */
import type { ScenarioRow } from './scenario-row.js';

export function renderTable(rows: readonly ScenarioRow[]): string {
  const nameWidth = Math.max(8, ...rows.map((row) => row.scenario.length));
  const lines = [`${'scenario'.padEnd(nameWidth)}  result  seconds  checked`, '-'.repeat(nameWidth + 60)];
  for (const row of rows) {
    lines.push(`${row.scenario.padEnd(nameWidth)}  ${(row.pass ? 'pass' : 'FAIL').padEnd(6)}  ${row.seconds.toFixed(1).padStart(7)}  ${row.checked}`);
    const figures = row.counts.map(([name, value]) => `${name} ${typeof value === 'number' ? value.toLocaleString('en-US') : value}`).join(' · ');
    if (figures !== '') lines.push(`${' '.repeat(nameWidth + 2)}${figures}`);
    for (const failure of row.failures) lines.push(`${' '.repeat(nameWidth + 2)}✗ ${failure}`);
  }
  const failed = rows.filter((row) => !row.pass).length;
  lines.push('-'.repeat(nameWidth + 60), `${rows.length - failed} of ${rows.length} scenarios passed`);
  return `${lines.join('\n')}\n`;
}
