/**
 * Where `raretide evaluate` writes its report, and the writing itself: both files go to temporary
 * names beside their targets and are renamed only once both are written, so a failure or Ctrl-C never
 * leaves a partial report under the names asked for.
 */
import { rename, rm, stat, writeFile } from 'node:fs/promises';
import { basename, dirname, extname, join, resolve } from 'node:path';
import { UsageError } from '../../../config/errors.js';

export interface ReportPaths {
  readonly html: string;
  readonly json: string;
}

/** Used when the records come from a topic and no `--out` is given. */
export const DEFAULT_REPORT_FILE = 'raretide-report.html';

/**
 * `--out`, else beside an input file as `<name>-report.html`, else `raretide-report.html`; `--json`, else
 * the HTML path with `.json` for its extension.
 */
export function reportPaths(options: { readonly out?: string; readonly json?: string; readonly inputFile?: string }): ReportPaths {
  const html = options.out ?? (options.inputFile === undefined ? DEFAULT_REPORT_FILE : join(dirname(options.inputFile), `${stem(options.inputFile)}-report.html`));
  const json = options.json ?? join(dirname(html), `${stem(html)}.json`);
  return { html, json };
}

function stem(path: string): string {
  const name = basename(path);
  return name.slice(0, name.length - extname(name).length) || name;
}

/** Refuses paths that would overwrite an input or each other, or whose directory is missing, before any work. */
export async function checkReportPaths(paths: ReportPaths, inputs: readonly string[]): Promise<void> {
  if (resolve(paths.html) === resolve(paths.json)) {
    throw new UsageError(`the HTML and JSON reports would both be written to ${paths.html}; give --json <report.json> another path`);
  }
  for (const [flag, path] of [['--out', paths.html], ['--json', paths.json]] as const) {
    const input = inputs.find((candidate) => resolve(candidate) === resolve(path));
    if (input !== undefined) throw new UsageError(`${flag} ${path} is an input file; write the report to another path`);
    const directory = dirname(path);
    const found = await stat(directory).catch(() => undefined);
    if (found === undefined || !found.isDirectory()) {
      throw new UsageError(`${flag} ${path}: directory ${directory} does not exist; create it or write the report elsewhere`);
    }
  }
}

/** Writes both files under temporary names, then renames them into place. */
export async function writeReportFiles(paths: ReportPaths, html: string, json: string): Promise<void> {
  const temporary = { html: temporaryName(paths.html), json: temporaryName(paths.json) };
  try {
    await writeFile(temporary.html, html);
    await writeFile(temporary.json, json);
    await rename(temporary.json, paths.json);
    await rename(temporary.html, paths.html);
  } catch (error) {
    await Promise.all([rm(temporary.html, { force: true }), rm(temporary.json, { force: true })]);
    throw error;
  }
}

function temporaryName(path: string): string {
  return join(dirname(path), `.${basename(path)}.${process.pid}.tmp`);
}
