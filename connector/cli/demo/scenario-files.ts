/**
 * Step 1 of the demo: the scenario's schema, its config, and its readings as Avro container files —
 * one stream of readings, the first three quarters as the history to learn from, the later quarter held
 * out to score on (as one would test a model on data from after its training period). The same seed
 * writes the same bytes.
 */
import { writeFile } from 'node:fs/promises';

import { ContainerFileWriter } from '../../avro/container/container-writer.js';
import { knownSchema, type KnownSchema } from '../../avro/known-schema.js';
import { syncMarkerFor } from '../../files/sync-marker.js';
import { renderDemoConfig, type DemoConfigSettings } from './demo-config.js';
import type { DemoPaths } from './demo-directory.js';
import { PUMP_STATION_SCHEMA, type PumpCondition } from './pump-station-schema.js';
import { PumpStationTelemetry } from './pump-station-telemetry.js';

export const pumpStationSchema: KnownSchema = knownSchema(PUMP_STATION_SCHEMA, 'pump-station-telemetry.avsc');

/** Share of the generated readings held out from training. */
export const HOLDOUT_SHARE = 0.25;

/** Header metadata of every file the demo generates, so the data says it is invented wherever it goes. */
export const INVENTED_DATA_METADATA = { 'raretide.demo': 'INVENTED pump-station telemetry from `raretide demo`: not real data' };

export interface GeneratedFiles {
  readonly history: Readonly<Record<PumpCondition, number>>;
  readonly holdout: Readonly<Record<PumpCondition, number>>;
}

export async function writeScenarioFiles(paths: DemoPaths, records: number, seed: number, config: DemoConfigSettings): Promise<GeneratedFiles> {
  await writeFile(paths.schema, `${JSON.stringify(PUMP_STATION_SCHEMA, null, 2)}\n`);
  await writeFile(paths.config, renderDemoConfig(config));
  const telemetry = new PumpStationTelemetry({ seed });
  const holdoutCount = Math.round(records * HOLDOUT_SHARE);
  const history = await writeReadings(paths.history, telemetry, records - holdoutCount, seed);
  const holdout = await writeReadings(paths.holdout, telemetry, holdoutCount, seed);
  return { history, holdout };
}

async function writeReadings(path: string, telemetry: PumpStationTelemetry, count: number, seed: number): Promise<Record<PumpCondition, number>> {
  const perClass: Record<PumpCondition, number> = { normal: 0, cavitation: 0, 'seal-leak': 0, 'dry-run': 0 };
  const writer = await ContainerFileWriter.create(path, { schema: pumpStationSchema, codec: 'deflate', syncMarker: syncMarkerFor(seed), metadata: INVENTED_DATA_METADATA });
  try {
    for (let index = 0; index < count; index++) {
      const reading = telemetry.next();
      perClass[reading.condition] += 1;
      await writer.append(reading);
    }
    await writer.close();
  } catch (error) {
    await writer.abort();
    throw error;
  }
  return perClass;
}
