import type avro from 'avsc';
import { UsageError } from '../../config/errors.js';
import { describeAvroType, isRecord, isUnion, logicalTypeName } from './avro-types.js';
import type { CategoricalPlan, FieldInfo, FieldPlan, FreshPlan, LabelPlan, RecordPlan } from './field-plan.js';
import { needsSourceValues, planWidth } from './field-plan.js';
import { buildMarginal } from './marginal.js';
import type { FieldPolicy, ResolvedCodecOptions } from './options.js';

/**
 * Infers what to do with every field from the schema and a sample of records, applying the policy
 * overrides. Rules (each overridable per field):
 * - int, long, float, double → continuous, unless the name looks like an identifier (int/long) or the
 *   type carries a logical type (timestamps, dates, decimals…);
 * - enum, boolean → one-hot; string → one-hot when few distinct values repeat, else copied;
 * - ["null", T] → presence feature + T's features; other unions, bytes, fixed, arrays, maps → copied;
 * - records → flattened by dotted path.
 */
export interface InferredPlan {
  readonly root: RecordPlan;
  readonly label: LabelPlan | undefined;
}

interface PlanContext {
  readonly options: ResolvedCodecOptions;
  /** Paths the planner decided on, to find overrides that name nothing. */
  readonly visited: Set<string>;
  label: LabelPlan | undefined;
}

const SEPARATED_IDENTIFIER = /(^|[_-])(id|uuid|guid)$/i;
const CAMEL_CASE_IDENTIFIER = /[a-z0-9](Id|ID|Uuid|UUID|Guid|GUID)$/;

/**
 * Whether a field name reads as an identifier: `id`, `order_id`, `trace-uuid`, `customerId`, `userID`,
 * but not `paid` or `fluid` (a naming heuristic, common practice).
 */
export function looksLikeIdentifier(name: string): boolean {
  return SEPARATED_IDENTIFIER.test(name) || CAMEL_CASE_IDENTIFIER.test(name);
}
const LABEL_TYPES = new Set(['enum', 'string', 'boolean', 'int', 'long']);

function policyError(path: string, message: string): UsageError {
  return new UsageError(`Field \`${path}\`: ${message}`, { code: 'features.policy' });
}

function joinPath(parent: string, name: string): string {
  return parent === '' ? name : `${parent}.${name}`;
}

function lastSegment(path: string): string {
  return path.slice(path.lastIndexOf('.') + 1);
}

function isPresent(value: unknown): boolean {
  return value !== null && value !== undefined;
}

/** The non-null branch of a ["null", T] union, or undefined for any other type. */
export function nullableValueType(type: avro.Type): avro.Type | undefined {
  if (!isUnion(type) || type.types.length !== 2) return undefined;
  const nullIndex = type.types.findIndex((branch) => branch.typeName === 'null');
  return nullIndex < 0 ? undefined : type.types[1 - nullIndex];
}

function acceptsNull(type: avro.Type): boolean {
  return type.typeName === 'null' || (isUnion(type) && type.types.some((branch) => branch.typeName === 'null'));
}

function info(type: avro.Type, path: string, policy: FieldInfo['policy'], reason: string): FieldInfo {
  return { path, avroType: describeAvroType(type), policy, reason };
}

function freshPlan(type: avro.Type, path: string): FreshPlan {
  const valueType = nullableValueType(type) ?? type;
  const fieldInfo = info(type, path, 'fresh', 'set in config');
  const nullable = valueType !== type;
  const logical = logicalTypeName(valueType);
  if (logical === 'uuid') return { kind: 'fresh', info: fieldInfo, fresh: 'uuid', nullable };
  const kind = logical === undefined ? valueType.typeName : '';
  switch (kind) {
    case 'string':
    case 'int':
    case 'long':
    case 'bytes':
      return { kind: 'fresh', info: fieldInfo, fresh: kind, nullable };
    case 'fixed':
      return { kind: 'fresh', info: fieldInfo, fresh: 'fixed', size: (valueType as avro.types.FixedType).size, nullable };
    default:
      throw policyError(
        path,
        `policy \`fresh\` makes new identifiers and needs a string, uuid, int, long, bytes or fixed field, ` +
          `but this one is ${describeAvroType(type)}; use \`copy\`${acceptsNull(type) ? ', `null`' : ''} or \`learn\` instead.`,
      );
  }
}

/** A field whose override is copy, fresh or null. */
function overridePlan(type: avro.Type, path: string, policy: Exclude<FieldPolicy, 'learn'>): FieldPlan {
  switch (policy) {
    case 'copy':
      return { kind: 'copy', info: info(type, path, 'copy', 'set in config') };
    case 'null':
      if (!acceptsNull(type)) {
        throw policyError(
          path,
          `policy \`null\` needs a nullable field, but this one is ${describeAvroType(type)}; use \`copy\` or ` +
            `\`fresh\`, or declare the field as ["null", …] in the schema.`,
        );
      }
      return { kind: 'null', info: info(type, path, 'null', 'set in config') };
    case 'fresh':
      return freshPlan(type, path);
  }
}

function countValues(values: readonly unknown[], key: (value: unknown) => string): Map<string, number> {
  const counts = new Map<string, number>();
  for (const value of values) {
    if (!isPresent(value)) continue;
    const name = key(value);
    counts.set(name, (counts.get(name) ?? 0) + 1);
  }
  return counts;
}

function stringCategories(type: avro.Type, path: string, values: readonly unknown[], reason: string): CategoricalPlan {
  const counts = countValues(values, String);
  const ordered = [...counts.entries()].sort((a, b) => b[1] - a[1] || (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0));
  return {
    kind: 'categorical',
    info: info(type, path, 'learn', reason),
    valueType: 'string',
    categories: ordered.map(([name]) => name),
    counts: ordered.map(([, count]) => count),
  };
}

function unlearnable(type: avro.Type, path: string): UsageError {
  return policyError(
    path,
    `policy \`learn\` cannot encode ${describeAvroType(type)}; use \`copy\`${acceptsNull(type) ? ' or `null`' : ''} instead.`,
  );
}

/** Plans a field the codec should learn if it can (forced: the config asked for `learn`). */
function planLearned(
  type: avro.Type,
  path: string,
  values: readonly unknown[],
  context: PlanContext,
  insideNullable: boolean,
  forced: boolean,
): FieldPlan {
  if (isRecord(type)) {
    const records = values.filter(isPresent) as Record<string, unknown>[];
    return {
      kind: 'record',
      path,
      fields: type.fields.map((field) => ({
        name: field.name,
        plan: planField(field.type, joinPath(path, field.name), records.map((record) => record[field.name]), context, insideNullable),
      })),
    };
  }
  const reason = (inferred: string): string => (forced ? 'set in config' : `inferred: ${inferred}`);
  const copy = (why: string): FieldPlan => {
    if (forced) throw unlearnable(type, path);
    return { kind: 'copy', info: info(type, path, 'copy', `inferred: ${why}`) };
  };
  if (isUnion(type)) return copy('a union of several types is copied');
  const logical = logicalTypeName(type);
  const base = logical === undefined ? type : (type as avro.types.LogicalType).underlyingType;
  if (logical !== undefined && !forced) return copy(`logical type ${logical} is copied`);
  switch (base.typeName) {
    case 'boolean': {
      const counts = countValues(values, String);
      return {
        kind: 'categorical',
        info: info(type, path, 'learn', reason('boolean')),
        valueType: 'boolean',
        categories: ['false', 'true'],
        counts: [counts.get('false') ?? 0, counts.get('true') ?? 0],
      };
    }
    case 'enum': {
      const symbols = (base as avro.types.EnumType).symbols;
      const counts = countValues(values, String);
      return {
        kind: 'categorical',
        info: info(type, path, 'learn', reason('enum')),
        valueType: 'enum',
        categories: [...symbols],
        counts: symbols.map((symbol) => counts.get(symbol) ?? 0),
      };
    }
    case 'int':
    case 'long':
    case 'float':
    case 'double': {
      const integer = base.typeName === 'int' || base.typeName === 'long';
      if (integer && !forced && looksLikeIdentifier(lastSegment(path))) return copy('identifier-like name');
      const finite = values.filter((value): value is number => typeof value === 'number' && Number.isFinite(value));
      if (finite.length === 0) {
        if (forced) throw policyError(path, 'policy `learn` needs sample values, but the sample has none; use `copy`.');
        return copy('no values in the sample');
      }
      return {
        kind: 'continuous',
        info: info(type, path, 'learn', reason('numeric')),
        integer,
        marginal: buildMarginal(finite, context.options.quantiles),
      };
    }
    case 'string': {
      if (!forced && looksLikeIdentifier(lastSegment(path))) return copy('identifier-like name');
      const strings = values.filter((value): value is string => typeof value === 'string');
      const distinct = new Set(strings).size;
      if (forced) {
        if (distinct === 0) throw policyError(path, 'policy `learn` needs sample values, but the sample has none; use `copy`.');
        return stringCategories(type, path, strings, reason(''));
      }
      // A category repeats: at most half as many distinct values as values (common practice heuristic).
      if (distinct >= 1 && distinct <= context.options.maxCategories && distinct * 2 <= strings.length) {
        return stringCategories(type, path, strings, reason(`${distinct} distinct values in ${strings.length}`));
      }
      if (distinct === 0) return copy('no values in the sample');
      return copy(`${distinct} distinct values in ${strings.length} (identifiers or free text; maxCategories ${context.options.maxCategories})`);
    }
    default:
      return copy(`${base.typeName} is copied`);
  }
}

function planLabel(type: avro.Type, path: string, values: readonly unknown[], context: PlanContext, insideNullable: boolean): FieldPlan {
  const valueType = nullableValueType(type) ?? type;
  const logical = logicalTypeName(valueType);
  const base = logical === undefined ? valueType : (valueType as avro.types.LogicalType).underlyingType;
  if (insideNullable || !LABEL_TYPES.has(base.typeName)) {
    throw new UsageError(
      `Label field \`${path}\` is ${describeAvroType(type)}${insideNullable ? ' inside a nullable record' : ''}; ` +
        `the label must be an enum, string, boolean, int or long field reached through non-nullable records. ` +
        `Set labelPath to such a field.`,
      { code: 'features.label' },
    );
  }
  if (context.options.policies.has(path)) {
    throw policyError(path, 'this is the label field, which is always kept apart and copied; remove its policy override.');
  }
  const counts = countValues(values, String);
  let names = [...counts.keys()];
  if (base.typeName === 'enum') names = (base as avro.types.EnumType).symbols.filter((symbol) => counts.has(symbol));
  else if (base.typeName === 'int' || base.typeName === 'long') names.sort((a, b) => Number(a) - Number(b));
  else names.sort();
  context.label = {
    path,
    avroType: describeAvroType(type),
    classes: names.map((name) => ({ name, count: counts.get(name)! })),
  };
  return { kind: 'copy', info: info(type, path, 'label', 'label: kept apart as the class') };
}

function hasOverrideWithin(path: string, context: PlanContext): boolean {
  for (const key of context.options.policies.keys()) if (key === path || key.startsWith(`${path}.`)) return true;
  return false;
}

function planField(type: avro.Type, path: string, values: readonly unknown[], context: PlanContext, insideNullable: boolean): FieldPlan {
  context.visited.add(path);
  if (path === context.options.labelPath) return planLabel(type, path, values, context, insideNullable);
  const override = context.options.policies.get(path);
  if (override !== undefined && override !== 'learn') return overridePlan(type, path, override);
  const forced = override === 'learn';
  const valueType = nullableValueType(type);
  if (valueType === undefined) return planLearned(type, path, values, context, insideNullable, forced);
  const value = planLearned(valueType, path, values.filter(isPresent), context, true, forced);
  if (planWidth(value) === 0 && !hasOverrideWithin(path, context)) {
    const reason = value.kind === 'copy' ? value.info.reason : 'inferred: nothing inside is learned';
    return { kind: 'copy', info: info(type, path, 'copy', reason) };
  }
  return {
    kind: 'nullable',
    info: info(type, path, 'learn', forced ? 'set in config' : 'inferred: nullable'),
    needsSource: needsSourceValues(value),
    value,
  };
}

/** Every field path of the schema, through records and ["null", record] unions. */
function listFieldPaths(type: avro.Type, path: string, paths: string[]): string[] {
  const recordType = isRecord(type) ? type : nullableValueType(type);
  if (recordType !== undefined && isRecord(recordType)) {
    for (const field of recordType.fields) {
      const fieldPath = joinPath(path, field.name);
      paths.push(fieldPath);
      listFieldPaths(field.type, fieldPath, paths);
    }
  }
  return paths;
}

function checkEveryPathUsed(type: avro.Type, context: PlanContext): void {
  const known = listFieldPaths(type, '', []);
  const unused = [...context.options.policies.keys(), ...(context.options.labelPath === undefined ? [] : [context.options.labelPath])]
    .filter((path) => !context.visited.has(path));
  for (const path of unused) {
    if (known.includes(path)) {
      throw policyError(path, 'it lies inside a record whose own policy (copy, fresh or null) covers it whole; remove one of the two.');
    }
    const shown = known.slice(0, 40).join(', ') + (known.length > 40 ? ', …' : '');
    throw new UsageError(`Field \`${path}\` named in the feature codec options is not in the schema; fields are: ${shown}.`, {
      code: 'features.unknown-field',
    });
  }
}

/** Builds the plan for a record type from a sample of its records. */
export function inferPlan(type: avro.Type, sample: readonly unknown[], options: ResolvedCodecOptions): InferredPlan {
  if (!isRecord(type)) {
    throw new UsageError(`The feature codec needs a record schema, got ${describeAvroType(type)}.`, { code: 'features.schema' });
  }
  const context: PlanContext = { options, visited: new Set(), label: undefined };
  const root = planLearned(type, '', sample, context, false, false) as RecordPlan;
  checkEveryPathUsed(type, context);
  return { root, label: context.label };
}
