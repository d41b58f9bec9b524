import type { DeliveryConfig, FramingConfig, LabelConfig, PrivacyGuardConfig, RaretideConfig } from '../../config/schema.js';
import { defaultStateTopic, transactionalIdFor } from '../kafka/client-settings.js';

/**
 * A few human lines describing a validated config, one per section, so a user sees what raretide
 * understood. Secrets stay out: librdkafka settings are counted, never shown.
 */

function percent(share: number): string {
  return `${Number((share * 100).toFixed(2))}%`;
}

function framingText(framing: FramingConfig): string {
  switch (framing.kind) {
    case 'raw':
      return `raw framing (${framing.schemaFile})`;
    case 'single-object':
      return `single-object framing (${framing.schemaFiles.length} schema file${framing.schemaFiles.length === 1 ? '' : 's'})`;
    case 'registry':
      return `registry framing (${framing.url})`;
  }
}

function labelText(label: LabelConfig): string {
  switch (label.from) {
    case 'field':
      return `field ${label.path}`;
    case 'header':
      return `header ${label.name}`;
    case 'key':
      return 'message key';
  }
}

function guardText(guard: PrivacyGuardConfig): string {
  return guard.scope === 'off' ? 'privacy guard off' : `privacy guard ${guard.scope}, min distance ${guard.minDistance}`;
}

/** The state topic and transactional id depend on the group; `run --instance-id` (default: host name) completes the id. */
function deliveryText(delivery: DeliveryConfig, group: string | undefined): string {
  const text = `${delivery.guarantee}, batches of ${delivery.batchSize}`;
  if (group === undefined) return text;
  const transactions = delivery.guarantee === 'exactly-once' ? `, transactional id ${transactionalIdFor(group, '<instance id>')}` : '';
  return `${text}, class counts in ${delivery.stateTopic ?? defaultStateTopic(group)}${transactions}`;
}

function plural(count: number, noun: string): string {
  return `${count} ${noun}${count === 1 ? '' : 's'}`;
}

const NOT_SET = '— (not set)';

function sectionLines(config: RaretideConfig): [string, string][] {
  const { kafka, source, sink, label, balance, rateCap, delivery, model, fields, training, metrics, log } = config;
  const settingCount = kafka === undefined ? 0 : Object.keys(kafka.settings).length;
  return [
    ['kafka', kafka === undefined ? NOT_SET : `${kafka.brokers}${settingCount > 0 ? ` (+${plural(settingCount, 'setting')})` : ''}`],
    ['source', source === undefined ? NOT_SET : `${source.topic}, group ${source.group}, ${framingText(source.framing)}`],
    [
      'sink',
      sink === undefined
        ? NOT_SET
        : `${sink.topic} (${sink.includeOriginals ? 'originals + synthetic' : 'synthetic only'}), dead letters → ${sink.deadLetterTopic}`,
    ],
    ['label', label === undefined ? NOT_SET : labelText(label)],
    [
      'balance',
      balance === undefined
        ? NOT_SET
        : `${Object.entries(balance.targets)
            .map(([name, share]) => `${name} ${percent(share)}`)
            .join(', ')}; k ≤ ${balance.maxPerRecord}, temperature ${balance.temperature}, seed ${balance.seed}, ${balance.counting.mode} counts`,
    ],
    ['rate cap', rateCap === undefined ? 'none' : `${rateCap.perSecond}/s, burst ${rateCap.burst}, ${rateCap.whenExceeded} when exceeded`],
    ['delivery', deliveryText(delivery, source?.group)],
    ['model', model === undefined ? NOT_SET : `${model.dir} (${guardText(model.privacyGuard)})`],
    ['fields', Object.keys(fields).length === 0 ? 'inferred' : `inferred, ${plural(Object.keys(fields).length, 'override')}`],
    ['training', `latent ${training.latent}, hidden [${training.hidden.join(', ')}], up to ${training.epochs} epochs`],
    ['metrics', metrics.enabled ? `http://${metrics.host}:${metrics.port}/metrics` : 'off'],
    ['log', `${log.level}, ${log.format}`],
  ];
}

export function renderConfigSummary(fileName: string, config: RaretideConfig): string {
  return alignedLines(`config ok: ${fileName}`, sectionLines(config));
}

/** A title line, then one indented `name  text` line per entry, the names padded to one width. */
export function alignedLines(title: string, lines: readonly (readonly [string, string])[]): string {
  const width = Math.max(...lines.map(([name]) => name.length));
  return [title, ...lines.map(([name, text]) => `  ${name.padEnd(width)}  ${text}`)].join('\n') + '\n';
}
