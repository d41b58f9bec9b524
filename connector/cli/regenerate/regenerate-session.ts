/**
 * What both forms of `regenerate` open: the config, the model (the one named, or the config's), the
 * reader schema a replay with that config used, and the input file read forward once. The source
 * record of one tag can also come from a topic (topic-source-record.ts), through the same regenerator.
 */
import { basename } from 'node:path';
import { UsageError } from '../../../config/errors.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections, type ConfigWith } from '../../../config/requirements.js';
import type { Framing } from '../../avro/framing.js';
import type { KnownSchema } from '../../avro/known-schema.js';
import { ModelSynthesizer } from '../../pipeline/model-synthesizer.js';
import type { SyntheticTag } from '../../pipeline/provenance.js';
import type { InputMessage } from '../../pipeline/source-sink.js';
import type { CliContext } from '../cli-context.js';
import { openInput, type OpenedInput } from '../replay/replay-endpoints.js';
import { readerSchema } from '../replay/run-replay.js';
import { Regenerator } from './regenerator.js';
import { SourceCursor } from './source-cursor.js';

export interface SessionRequest {
  readonly configPath: string;
  /** The input file the replay read. */
  readonly input: string;
  /** Overrides `model.dir`. */
  readonly modelDir?: string;
  /** The name the input had in the replay's provenance. @default its base name */
  readonly sourceName?: string;
}

/** What regenerating one record needs, whatever holds its source record. */
export interface SingleRecordSession {
  readonly regenerator: Regenerator;
  readonly reader: KnownSchema;
  /** The source record `tag` names; fails naming it (`where` is the record being made) when there is none. */
  sourceRecord(tag: SyntheticTag, where: string): Promise<InputMessage>;
  close(): Promise<void>;
}

/** A session on an input file, which `--verify` reads forward once. */
export interface RegenerateSession extends SingleRecordSession {
  readonly cursor: SourceCursor;
  /** Refuses a tag whose source is not this input (file sources are partition 0). */
  checkSource(tag: SyntheticTag, where: string): void;
}

/** The config, the model and the reader schema: what a session on any source loads first. */
export interface LoadedModel {
  readonly config: ConfigWith<'label' | 'model'>;
  readonly synthesizer: ModelSynthesizer;
  readonly reader: KnownSchema;
  /** A regenerator for payloads framed as `inputFraming`. */
  regeneratorFor(inputFraming: Framing): Regenerator;
}

export async function loadModel(request: { readonly configPath: string; readonly modelDir?: string }, context: CliContext): Promise<LoadedModel> {
  const config = requireSections(await loadConfigFile(request.configPath, { env: context.env }), 'regenerate', ['label', 'model']);
  const synthesizer = await ModelSynthesizer.load(request.modelDir ?? config.model.dir, config.model.privacyGuard);
  try {
    const reader = await readerSchema(config.source?.readerSchemaFile, synthesizer);
    return {
      config,
      synthesizer,
      reader,
      regeneratorFor: (inputFraming) => new Regenerator({ model: synthesizer.model, privacyGuard: config.model.privacyGuard, label: config.label, reader, inputFraming }),
    };
  } catch (error) {
    synthesizer.dispose();
    throw error;
  }
}

export async function openSession(request: SessionRequest, context: CliContext): Promise<RegenerateSession> {
  const loaded = await loadModel(request, context);
  const { config, synthesizer, reader } = loaded;
  let input: OpenedInput | undefined;
  try {
    if (config.label.from !== 'field') {
      throw new UsageError(`label.from is ${config.label.from}, but records of ${request.input} have no ${config.label.from === 'key' ? 'keys' : 'headers'}; label them by a field (label.from: field), as the replay did.`);
    }
    input = await openInput({ kind: 'file', path: request.input }, reader);
    const sourceName = request.sourceName ?? basename(request.input);
    const opened = input;
    const cursor = new SourceCursor(input.source, request.input);
    const checkSource = (tag: SyntheticTag, where: string): void => {
      if (tag.source.topic === sourceName && tag.source.partition === 0) return;
      throw new UsageError(
        `${where} was made from ${tag.source.topic}:${tag.source.partition}, but --file ${request.input} is ${sourceName}:0 ` +
          `(a file source is partition 0 of its file name): pass the input the replay read${tag.source.partition === 0 ? `, or --source-name ${tag.source.topic} if it was renamed` : ''}.`,
        { code: 'regenerate.other-source' },
      );
    };
    return {
      regenerator: loaded.regeneratorFor(input.framing),
      reader,
      cursor,
      checkSource,
      async sourceRecord(tag, where) {
        checkSource(tag, where);
        const message = await cursor.take(tag.source.offset);
        if (message === undefined) throw new UsageError(`${where} was made from offset ${tag.source.offset}, which the input file does not reach; pass the input the replay read.`);
        return message;
      },
      async close() {
        await opened.source.close();
        synthesizer.dispose();
      },
    };
  } catch (error) {
    await input?.source.close();
    synthesizer.dispose();
    throw error;
  }
}
