/** A plain HTML table of text cells; every cell is escaped here, so callers pass data as it is. */
import { escapeHtml } from './html-text.js';

export interface TableCell {
  readonly text: string;
  /** Best of its row: shown in bold. */
  readonly best?: boolean;
  /** A value to look at twice (e.g. exact copies of real records). */
  readonly warn?: boolean;
}

export interface TableRow {
  /** Row header cells (e.g. class, metric). */
  readonly heads: readonly string[];
  readonly cells: readonly TableCell[];
}

export interface Table {
  /** `data-table` attribute, so readers can find the table. */
  readonly id: string;
  readonly caption: string;
  readonly columnHeads: readonly string[];
  readonly rows: readonly TableRow[];
}

export function tableHtml(table: Table): string {
  const headColumns = table.rows[0]?.heads.length ?? 0;
  const head = `<tr>${table.columnHeads.map((text, index) => `<th scope="col"${index < headColumns ? ' class="rowhead"' : ''}>${escapeHtml(text)}</th>`).join('')}</tr>`;
  const spans = leadingSpans(table.rows);
  const body = table.rows
    .map((row, index) => {
      const heads = row.heads
        .map((text, column) => {
          if (column > 0) return `<th scope="row">${escapeHtml(text)}</th>`;
          const span = spans[index]!;
          if (span === 0) return '';
          return `<th scope="row"${span > 1 ? ` rowspan="${span}"` : ''}>${escapeHtml(text)}</th>`;
        })
        .join('');
      return `<tr>${heads}${row.cells.map(cellHtml).join('')}</tr>`;
    })
    .join('\n');
  // The caption is a paragraph above the table: a <caption> is only as wide as a narrow table.
  const caption = escapeHtml(table.caption);
  return (
    `<p class="table-caption">${caption}</p>` +
    `<table class="metrics" data-table="${escapeHtml(table.id)}" aria-label="${caption}"><thead>${head}</thead><tbody>\n${body}\n</tbody></table>`
  );
}

/** Rows repeating the first head of the row above share one cell: its row span, 0 where covered. */
function leadingSpans(rows: readonly TableRow[]): number[] {
  const spans = rows.map(() => 1);
  let start = 0;
  rows.forEach((row, index) => {
    if (index > 0 && row.heads.length > 1 && row.heads[0] === rows[start]!.heads[0]) {
      spans[start]!++;
      spans[index] = 0;
    } else {
      start = index;
    }
  });
  return spans;
}

function cellHtml(cell: TableCell): string {
  const classes = [cell.best === true ? 'best' : '', cell.warn === true ? 'warn' : ''].filter((name) => name !== '').join(' ');
  return `<td${classes === '' ? '' : ` class="${classes}"`}>${escapeHtml(cell.text)}</td>`;
}

/**
 * Marks the cells whose score is best of the row (ties: all of them); `score` maps a cell's value to
 * "higher is better". Values that are not numbers are never best.
 */
export function markBest(values: readonly number[], texts: readonly string[], score: (value: number) => number = (value) => value): TableCell[] {
  const scores = values.map((value) => (Number.isFinite(value) ? score(value) : Number.NEGATIVE_INFINITY));
  const top = Math.max(...scores);
  // One value alone has nothing to beat.
  const comparable = scores.filter((value) => Number.isFinite(value)).length > 1;
  return texts.map((text, index) => ({ text, best: comparable && Number.isFinite(scores[index]!) && scores[index] === top }));
}
