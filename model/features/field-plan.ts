import type { MarginalJson } from './marginal.js';
import type { FieldPolicy } from './options.js';

/**
 * The plan of a codec: for every field of the schema, what the codec does with it. Plain data (it is
 * the codec's JSON form); feature offsets are not stored but assigned by walking the plan in order.
 */

/** What the field table shows about a field. */
export interface FieldInfo {
  /** Dotted path, e.g. `reading.pressure`. */
  readonly path: string;
  /** The declared type as text, e.g. `["null", double]`, `long (timestamp-millis)`. */
  readonly avroType: string;
  readonly policy: FieldPolicy | 'label';
  /** Why this policy: `inferred: …` or `set in config`. */
  readonly reason: string;
}

/** A record whose fields are planned one by one (flattened by dotted path). */
export interface RecordPlan {
  readonly kind: 'record';
  readonly path: string;
  readonly fields: readonly { readonly name: string; readonly plan: FieldPlan }[];
}

/**
 * A ["null", T] union whose value is learned: a presence feature, then T's features gated by it.
 * `needsSource`: T holds copied or fresh fields, so a decode keeps the field null when the source's is.
 */
export interface NullablePlan {
  readonly kind: 'nullable';
  readonly info: FieldInfo;
  readonly needsSource: boolean;
  readonly value: FieldPlan;
}

export interface ContinuousPlan {
  readonly kind: 'continuous';
  readonly info: FieldInfo;
  /** int and long decode to whole numbers. */
  readonly integer: boolean;
  readonly marginal: MarginalJson;
}

export interface CategoricalPlan {
  readonly kind: 'categorical';
  readonly info: FieldInfo;
  /** How categories are stored in records: enum symbols, booleans (`false`, `true`) or strings. */
  readonly valueType: 'enum' | 'boolean' | 'string';
  /**
   * Categories in feature order. Strings are ordered by sample frequency (most frequent first): a string
   * not seen in the sample is encoded as the first, the most frequent. Enums keep symbol order.
   */
  readonly categories: readonly string[];
  /** Sample count of each category, for the field table. */
  readonly counts: readonly number[];
}

/** How a `fresh` field makes a new value. */
export type FreshKind = 'uuid' | 'string' | 'int' | 'long' | 'bytes' | 'fixed';

export interface FreshPlan {
  readonly kind: 'fresh';
  readonly info: FieldInfo;
  readonly fresh: FreshKind;
  /** Byte size of a fixed field. */
  readonly size?: number;
  /** True when the field is a ["null", T] union: a null source value stays null. */
  readonly nullable: boolean;
}

/** Copied from the source record (also used for the label field). */
export interface CopyPlan {
  readonly kind: 'copy';
  readonly info: FieldInfo;
}

export interface NullPlan {
  readonly kind: 'null';
  readonly info: FieldInfo;
}

export type FieldPlan = RecordPlan | NullablePlan | ContinuousPlan | CategoricalPlan | FreshPlan | CopyPlan | NullPlan;

/** The label: its path and the classes seen in the sample with their counts. */
export interface LabelPlan {
  readonly path: string;
  readonly avroType: string;
  readonly classes: readonly { readonly name: string; readonly count: number }[];
}

/** True when decoding the plan needs values from the source record. */
export function needsSourceValues(plan: FieldPlan): boolean {
  switch (plan.kind) {
    case 'record':
      return plan.fields.some((field) => needsSourceValues(field.plan));
    case 'nullable':
      return plan.needsSource;
    case 'copy':
    case 'fresh':
      return true;
    case 'continuous':
    case 'categorical':
    case 'null':
      return false;
  }
}

/** Number of features the plan occupies. */
export function planWidth(plan: FieldPlan): number {
  switch (plan.kind) {
    case 'record':
      return plan.fields.reduce((sum, field) => sum + planWidth(field.plan), 0);
    case 'nullable':
      return 1 + planWidth(plan.value);
    case 'continuous':
      return 1;
    case 'categorical':
      return plan.categories.length;
    case 'fresh':
    case 'copy':
    case 'null':
      return 0;
  }
}
