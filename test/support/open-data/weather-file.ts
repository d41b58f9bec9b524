import { join } from 'node:path';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import { ContainerFileWriter } from '../../../connector/avro/container/container-writer.js';
import { seattleWeatherRows, seattleWeatherSchema } from './seattle-weather.js';

/** Writes the Seattle weather rows to `<directory>/seattle-weather.avro` (deflate) and returns the path. */
export async function writeSeattleWeatherFile(directory: string): Promise<string> {
  const path = join(directory, 'seattle-weather.avro');
  const writer = await ContainerFileWriter.create(path, { schema: knownSchema(seattleWeatherSchema, 'seattle-weather'), codec: 'deflate' });
  for (const row of seattleWeatherRows()) await writer.append(row);
  await writer.close();
  return path;
}
