import type { FieldDecoder } from './decode-record.js';
import { categoricalDecoder, continuousDecoder, copyDecoder, freshDecoder, nullableDecoder, nullDecoder, recordDecoder } from './decode-record.js';
import type { FieldEncoder } from './encode-record.js';
import { categoricalEncoder, continuousEncoder, nullableEncoder, recordEncoder } from './encode-record.js';
import type { FieldPlan, RecordPlan } from './field-plan.js';
import type { FeatureBlock, FeatureLayout } from './layout.js';
import { assertValidLayout } from './layout.js';
import { EmpiricalMarginal } from './marginal.js';

/**
 * A plan turned into its feature layout and the encode and decode functions for whole records.
 * Offsets follow the plan's field order, so the same plan always gives the same layout.
 */
export interface CompiledPlan {
  readonly layout: FeatureLayout;
  readonly encode: FieldEncoder;
  readonly decode: FieldDecoder;
  /** True when some field is `fresh`, so decoding needs a random source. */
  readonly usesRandom: boolean;
}

interface CompiledField {
  /** Undefined when the field has no features to write. */
  readonly encode: FieldEncoder | undefined;
  readonly decode: FieldDecoder;
}

export function compilePlan(plan: RecordPlan): CompiledPlan {
  const blocks: FeatureBlock[] = [];
  let offset = 0;
  let usesRandom = false;

  function compile(node: FieldPlan, gatedBy: number | undefined): CompiledField {
    const gate = gatedBy === undefined ? {} : { gatedBy };
    switch (node.kind) {
      case 'record': {
        const fields = node.fields.map((field) => ({ name: field.name, ...compile(field.plan, gatedBy) }));
        const encoded = fields.flatMap((field) => (field.encode === undefined ? [] : [{ name: field.name, encode: field.encode }]));
        return { encode: encoded.length === 0 ? undefined : recordEncoder(encoded), decode: recordDecoder(fields) };
      }
      case 'nullable': {
        const presenceOffset = offset;
        blocks.push({ kind: 'presence', path: node.info.path, offset, width: 1 });
        offset += 1;
        const value = compile(node.value, presenceOffset);
        const encodeValue = value.encode ?? ((): void => undefined);
        return {
          encode: nullableEncoder(presenceOffset, encodeValue),
          decode: nullableDecoder(presenceOffset, node.needsSource, value.decode),
        };
      }
      case 'continuous': {
        blocks.push({ kind: 'continuous', path: node.info.path, offset, width: 1, ...gate });
        const marginal = new EmpiricalMarginal(node.marginal);
        const compiled = { encode: continuousEncoder(offset, marginal), decode: continuousDecoder(offset, node.integer, marginal) };
        offset += 1;
        return compiled;
      }
      case 'categorical': {
        const width = node.categories.length;
        blocks.push({ kind: 'categorical', path: node.info.path, offset, width, categories: node.categories, ...gate });
        const indexOf = new Map(node.categories.map((category, index) => [category, index]));
        const compiled = {
          encode: categoricalEncoder(offset, node.valueType, indexOf),
          decode: categoricalDecoder(offset, node.valueType, node.categories),
        };
        offset += width;
        return compiled;
      }
      case 'fresh':
        usesRandom = true;
        return { encode: undefined, decode: freshDecoder(node.fresh, node.size ?? 0, node.nullable) };
      case 'copy':
        return { encode: undefined, decode: copyDecoder };
      case 'null':
        return { encode: undefined, decode: nullDecoder };
    }
  }

  const root = compile(plan, undefined);
  const layout = assertValidLayout({ width: offset, blocks });
  return { layout, encode: root.encode ?? ((): void => undefined), decode: root.decode, usesRandom };
}
