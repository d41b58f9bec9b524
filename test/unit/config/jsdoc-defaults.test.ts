import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { referenceSections } from '../../../config/reference.js';

/**
 * The config's JSDoc is for people reading the code; the runtime defaults are what validation fills
 * in. This reads the JSDoc of every key of every `z.object({…})` in the schema sources with the
 * TypeScript compiler and holds it against the schema.
 */

const SOURCES = ['config/schema.ts', ...readdirSync('config/sections').map((name) => join('config/sections', name))];

interface DocumentedKey {
  readonly file: string;
  readonly key: string;
  readonly hasDoc: boolean;
  /** The text after `@default`, when there is one. */
  readonly defaultTag?: string;
}

function documentedKeys(file: string): DocumentedKey[] {
  const source = ts.createSourceFile(file, readFileSync(file, 'utf8'), ts.ScriptTarget.ES2022, true);
  const keys: DocumentedKey[] = [];
  const visit = (node: ts.Node): void => {
    if (ts.isCallExpression(node) && node.expression.getText(source).replace(/\s+/g, '') === 'z.object') {
      const [shape] = node.arguments;
      if (shape !== undefined && ts.isObjectLiteralExpression(shape)) {
        for (const property of shape.properties) {
          if (!ts.isPropertyAssignment(property)) continue;
          const docs = ts.getJSDocCommentsAndTags(property);
          const tag = ts.getJSDocTags(property).find((candidate) => candidate.tagName.text === 'default');
          const comment = typeof tag?.comment === 'string' ? tag.comment.trim() : undefined;
          keys.push({ file, key: property.name.getText(source), hasDoc: docs.length > 0, ...(comment === undefined ? {} : { defaultTag: comment }) });
        }
      }
    }
    ts.forEachChild(node, visit);
  };
  visit(source);
  return keys;
}

const keys = SOURCES.flatMap(documentedKeys);

describe('config JSDoc', () => {
  it('documents every key of every config object', () => {
    expect(keys.length).toBeGreaterThan(40);
    expect(keys.filter((key) => !key.hasDoc).map((key) => `${key.file}: ${key.key}`)).toEqual([]);
  });

  it('states each runtime default with a matching @default tag', () => {
    const rows = referenceSections().flatMap((section) => section.rows);
    const mismatches: string[] = [];
    for (const row of rows) {
      if (row.defaultText === 'required' || row.defaultText === '—') continue;
      // The reference shows a union's default on its discriminator (`balance.counting.mode`); the tag sits on the union's key.
      const segments = row.path.split('.');
      const candidates = keys.filter((key) => key.defaultTag !== undefined && (key.key === segments.at(-1) || key.key === segments.at(-2)));
      const runtime = parseYaml(row.defaultText) as unknown;
      const matched = candidates.some((key) => {
        const documented = parseYaml(key.defaultTag ?? '') as unknown;
        return JSON.stringify(documented) === JSON.stringify(runtime) || JSON.stringify(documented) === JSON.stringify({ [segments.at(-1) ?? '']: runtime });
      });
      if (!matched) mismatches.push(`${row.path}: runtime default ${row.defaultText}, JSDoc ${candidates.map((key) => key.defaultTag).join(' / ') || 'none'}`);
    }
    expect(mismatches).toEqual([]);
  });
});
