import { stringify } from 'yaml';
import * as z from 'zod';
import { expectedPhrase, oneOf } from './describe-type.js';
import { didYouMean } from './did-you-mean.js';
import type { ConfigProblem } from './errors.js';
import { renderValueWithKind } from './render-value.js';
import { pathHoldsSecret, REDACTED } from './secret-names.js';
import { allowedKeys, formatPath, peel, schemaAt, valueAt } from './schema-walk.js';

/**
 * Turns zod issues into one-line problems that name the path, the bad value (with its kind) and what
 * to write instead. Messages written into the schema (`{ error: … }`) are used as they are; zod's own
 * generic texts are replaced by a description of what the schema at that path accepts.
 */

/** Parse with `{ error: markDefaultMessage }` so issues without a schema-written message carry this mark. */
export const DEFAULT_MESSAGE_MARK = '\u0000default';
export const markDefaultMessage = (): string => DEFAULT_MESSAGE_MARK;

export interface IssueContext {
  readonly schema: z.ZodType;
  /** The document that was validated (after environment overrides). */
  readonly document: unknown;
  /** Environment variable that set each path, keyed by `formatPath`. */
  readonly origins: ReadonlyMap<string, string>;
}

type Path = readonly PropertyKey[];

export function formatIssues(issues: readonly z.core.$ZodIssue[], context: IssueContext): ConfigProblem[] {
  const problems = issues.flatMap((issue) => formatIssue(issue, context));
  // A misspelt required key is reported once, as the unknown key with its suggestion.
  const suggested = new Set(problems.flatMap((problem) => (problem.suggestedPath === undefined ? [] : [problem.suggestedPath])));
  return problems
    .filter((problem) => !(problem.code === 'missing' && suggested.has(problem.path)))
    .map(({ path, code, message }) => ({ path, code, message }));
}

interface DraftProblem extends ConfigProblem {
  /** For an unknown key, the path of the key it was probably meant to be. */
  readonly suggestedPath?: string;
}

function formatIssue(issue: z.core.$ZodIssue, context: IssueContext): DraftProblem[] {
  switch (issue.code) {
    case 'unrecognized_keys':
      return issue.keys.map((key) => unknownKey(issue.path, key, context));
    case 'invalid_key': {
      const keyMessage = issue.issues.map((inner) => inner.message).find((message) => message !== DEFAULT_MESSAGE_MARK);
      const key = String(issue.path.at(-1));
      const path = formatPath(issue.path);
      return [problem(path, 'invalid_key', `${path}: invalid key ${JSON.stringify(key)}: ${keyMessage ?? expectedKey(issue.path, context)}`)];
    }
    case 'invalid_union': {
      const discriminator = (issue as { discriminator?: unknown }).discriminator;
      const options = (issue as { options?: unknown }).options;
      if (typeof discriminator === 'string' && Array.isArray(options)) {
        return [valueProblem(issue.path, 'invalid_value', `expected ${discriminator}: ${oneOf(options)}`, context)];
      }
      return [valueProblem(issue.path, issue.code, expectation(issue, context), context)];
    }
    case 'custom':
      return [valueProblem(issue.path, issue.code, issue.message, context)];
    default:
      return [valueProblem(issue.path, issue.code, expectation(issue, context), context)];
  }
}

function expectedKey(path: Path, context: IssueContext): string {
  const record = schemaAt(context.schema, path.slice(0, -1), context.document);
  const core = record === undefined ? undefined : peel(record).core;
  return core instanceof z.ZodRecord ? `expected a key that is ${expectedPhrase(core._zod.def.keyType as z.ZodType)}` : 'expected another key';
}

function problem(path: string, code: string, text: string): ConfigProblem {
  return { path, code, message: `config error: ${text}` };
}

/** `path = value (kind): fix`, or `path is missing: fix` when the document has nothing there. */
function valueProblem(path: Path, code: string, fix: string, context: IssueContext): ConfigProblem {
  const shown = formatPath(path);
  const where = shown === '' ? 'the config' : shown;
  if (!isPresent(context.document, path)) return problem(shown, 'missing', `${where} is missing: ${fix}`);
  const value = valueAt(context.document, path);
  const origin = originOf(path, context.origins);
  const note = origin === undefined ? undefined : `from ${origin}`;
  // An entry naming a credential may hold one: its kind is shown, never its value.
  const rendered = pathHoldsSecret(path) ? renderValueWithKind(value, note, REDACTED) : renderValueWithKind(value, note);
  return problem(shown, code, `${where} = ${rendered}: ${fix}`);
}

function isPresent(document: unknown, path: Path): boolean {
  if (path.length === 0) return document !== undefined;
  const parent = valueAt(document, path.slice(0, -1));
  const key = path.at(-1);
  return typeof parent === 'object' && parent !== null && typeof key !== 'symbol' && String(key) in parent;
}

function originOf(path: Path, origins: ReadonlyMap<string, string>): string | undefined {
  for (let length = path.length; length > 0; length -= 1) {
    const origin = origins.get(formatPath(path.slice(0, length)));
    if (origin !== undefined) return origin;
  }
  return undefined;
}

/** The schema's own message, or what the schema at this path accepts, plus an example when one is known. */
function expectation(issue: z.core.$ZodIssue, context: IssueContext): string {
  const schema = schemaAt(context.schema, issue.path, context.document);
  const base =
    issue.message !== DEFAULT_MESSAGE_MARK
      ? issue.message
      : schema === undefined
        ? 'expected a valid value'
        : `expected ${expectedPhrase(schema)}`;
  const example = schema === undefined ? undefined : exampleOf(schema);
  return example === undefined || base.includes('e.g.') ? base : `${base}, e.g. ${renderExample(example)}`;
}

/** The schema's first example, else its default when that is a plain value worth copying. */
function exampleOf(schema: z.ZodType): unknown {
  const peeled = peel(schema);
  const fallback = peeled.hasDefault && typeof peeled.defaultValue !== 'object' ? peeled.defaultValue : undefined;
  return peeled.meta.examples?.[0] ?? fallback;
}

function renderExample(example: unknown): string {
  return stringify(example, { collectionStyle: 'flow', flowCollectionPadding: false, lineWidth: 0 }).trim();
}

function unknownKey(objectPath: Path, key: string, context: IssueContext): DraftProblem {
  const path = [...objectPath, key];
  const objectValue = valueAt(context.document, objectPath);
  const objectSchema = schemaAt(context.schema, objectPath, context.document);
  const present = new Set(Object.keys(objectValue as object));
  const allowed = (objectSchema === undefined ? undefined : allowedKeys(objectSchema, objectValue)) ?? [];
  const unused = allowed.filter((candidate) => !present.has(candidate));
  const suggestion = didYouMean(key, unused);
  const what = objectPath.length === 0 ? 'unknown section' : 'unknown key';
  const fix =
    suggestion !== undefined
      ? `${what}; did you mean ${JSON.stringify(suggestion)}?`
      : `${what}; expected one of: ${allowed.join(', ')}`;
  const suggestedPath = suggestion === undefined ? undefined : formatPath([...objectPath, suggestion]);
  return { ...valueProblem(path, 'unknown_key', fix, context), suggestedPath };
}
