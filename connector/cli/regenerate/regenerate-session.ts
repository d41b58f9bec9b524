/**
 * What both forms of `regenerate` open: the config, the model (the one named, or the config's), the
 * reader schema a replay with that config used, and the input file read forward once.
 */
import { basename } from 'node:path';
import { UsageError } from '../../../config/errors.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import type { KnownSchema } from '../../avro/known-schema.js';
import { ModelSynthesizer } from '../../pipeline/model-synthesizer.js';
import type { SyntheticTag } from '../../pipeline/provenance.js';
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

export interface RegenerateSession {
  readonly regenerator: Regenerator;
  readonly reader: KnownSchema;
  readonly cursor: SourceCursor;
  /** Refuses a tag whose source is not this input (file sources are partition 0). */
  checkSource(tag: SyntheticTag, where: string): void;
  close(): Promise<void>;
}

export async function openSession(request: SessionRequest, context: CliContext): Promise<RegenerateSession> {
  const config = requireSections(await loadConfigFile(request.configPath, { env: context.env }), 'regenerate', ['label', 'model']);
  if (config.label.from !== 'field') {
    throw new UsageError(`label.from is ${config.label.from}, but records of ${request.input} have no ${config.label.from === 'key' ? 'keys' : 'headers'}; label them by a field (label.from: field), as the replay did.`);
  }
  const synthesizer = await ModelSynthesizer.load(request.modelDir ?? config.model.dir, config.model.privacyGuard);
  let input: OpenedInput | undefined;
  try {
    const reader = await readerSchema(config.source?.readerSchemaFile, synthesizer);
    input = await openInput({ kind: 'file', path: request.input }, reader);
    const sourceName = request.sourceName ?? basename(request.input);
    const regenerator = new Regenerator({ model: synthesizer.model, privacyGuard: config.model.privacyGuard, label: config.label, reader, inputFraming: input.framing });
    const opened = input;
    return {
      regenerator,
      reader,
      cursor: new SourceCursor(input.source, request.input),
      checkSource(tag, where) {
        if (tag.source.topic === sourceName && tag.source.partition === 0) return;
        throw new UsageError(
          `${where} was made from ${tag.source.topic}:${tag.source.partition}, but --file ${request.input} is ${sourceName}:0 ` +
            `(a file source is partition 0 of its file name): pass the input the replay read${tag.source.partition === 0 ? `, or --source-name ${tag.source.topic} if it was renamed` : ''}.`,
          { code: 'regenerate.other-source' },
        );
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
