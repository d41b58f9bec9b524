/**
 * Step 2 of the demo: what `raretide fit --config <demo config> --file history.avro --overwrite` does —
 * train the conditional VAE on the history file with the config's label, field policies and training
 * section, and write the model directory — with its epoch progress on standard error.
 */
import { UsageError } from '../../../config/errors.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import type { AvroRecord, AvroSchemaJson } from '../../../model/features/index.js';
import { fitModel } from '../../../model/fit.js';
import type { BackendName } from '../../../model/vae/backend.js';
import { saveModel } from '../../../model/vae/index.js';
import { ContainerFileReader } from '../../avro/container/container-reader.js';
import type { CliContext } from '../cli-context.js';
import { fitProgress, type ProgressStyle } from '../fit-progress.js';

export interface FittedDemoModel {
  readonly id: string;
  readonly epochs: number;
  readonly bestEpoch: number;
  readonly backend: BackendName;
}

/** `signal` ends training after the current epoch, keeping the best weights so far (as Ctrl-C does in `fit`). */
export async function fitDemoModel(configPath: string, historyFile: string, style: ProgressStyle, context: CliContext, signal?: AbortSignal): Promise<FittedDemoModel> {
  const config = requireSections(await loadConfigFile(configPath, { env: context.env }), 'demo', ['label', 'model']);
  if (config.label.from !== 'field') {
    throw new UsageError(`label.from is ${config.label.from}, but the demo's readings carry their class in the \`condition\` field; drop the RARETIDE__LABEL… override`);
  }
  const labelPath = config.label.path;
  const history = await ContainerFileReader.open(historyFile);
  const progress = fitProgress(style, context.stderr);
  try {
    const fitted = await fitModel(
      { schema: history.header.writer.json as AvroSchemaJson, records: history as AsyncIterable<AvroRecord>, labelPath, policies: config.fields, training: config.training },
      { onEpoch: (report) => progress.epoch(report), ...(signal === undefined ? {} : { signal }) },
    );
    try {
      const id = await saveModel(config.model.dir, fitted.bundle, { overwrite: true });
      const { curve, bestEpoch } = fitted.bundle.trained;
      return { id, epochs: curve.length, bestEpoch, backend: fitted.backend };
    } finally {
      fitted.dispose();
    }
  } finally {
    progress.finish();
    history.close();
  }
}
