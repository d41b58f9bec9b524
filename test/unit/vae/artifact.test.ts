import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import { createPrng } from '../../../model/random.js';
import { computeModelId, loadModel, saveModel, type ModelBundle } from '../../../model/vae/artifact.js';
import { buildGuardReference } from '../../../model/vae/guard.js';
import { samplePosterior, type SourceRow } from '../../../model/vae/sampler.js';
import { trainVae } from '../../../model/vae/train.js';
import { MIXED_LAYOUT, mixedData } from './support.js';

const data = mixedData(800, 0.1, createPrng(41));
const attachments = { codec: { fields: ['wave_height'] }, schema: '{"type":"record","name":"Reading","fields":[]}', fingerprint: 'c3019f5e' };
let workspace: string;
let bundle: ModelBundle;

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-artifact-'));
  const trained = await trainVae(MIXED_LAYOUT, data, { hidden: [16], latent: 3, epochs: 3, batchSize: 100, seed: 2 });
  bundle = { trained, guard: buildGuardReference(data), attachments };
});

afterAll(async () => {
  bundle.trained.network.dispose();
  await rm(workspace, { recursive: true, force: true });
});

const rows: SourceRow[] = [0, 1, 2].map((r) => ({
  features: data.features.slice(r * 8, (r + 1) * 8),
  classIndex: data.classes[r]!,
  key: { topic: 'harbour.sensors', partition: 1, offset: 100 + r },
  k: 3,
}));

async function savedCopy(name: string): Promise<{ directory: string; id: string }> {
  const directory = join(workspace, name);
  return { directory, id: await saveModel(directory, bundle) };
}

describe('model directory', () => {
  it('loads back with the same id, the same samples and everything the caller stored', async () => {
    const { directory, id } = await savedCopy('round-trip');
    expect(id).toMatch(/^[0-9a-f]{16}$/);
    expect(id).toBe(computeModelId(bundle));
    const loaded = await loadModel(directory, { expectedId: id });
    try {
      expect(loaded.id).toBe(id);
      expect(loaded.attachments).toEqual(attachments);
      expect(loaded.classNames).toEqual(['calm_day', 'storm']);
      expect(loaded.classCounts).toEqual(bundle.trained.classCounts);
      expect(loaded.curve).toHaveLength(3);
      expect(loaded.versions.tfjs).toMatch(/^4\./);
      expect(loaded.guard.rowHashes).toEqual(bundle.guard.rowHashes);
      expect(loaded.guard.classRows).toEqual(bundle.guard.classRows);
      const options = { temperature: 1, seed: 99 };
      const original = samplePosterior({ id, network: bundle.trained.network, layout: MIXED_LAYOUT }, rows, options);
      expect(samplePosterior(loaded, rows, options)).toEqual(original);
    } finally {
      loaded.dispose();
    }
    expect((await readdir(workspace)).filter((name) => name.includes('.writing-'))).toEqual([]);
  });

  it('gives the same id when saved twice (the id is a content hash)', async () => {
    expect((await savedCopy('again')).id).toBe((await savedCopy('and-again')).id);
  });

  it('refuses a weights file with one flipped byte, naming the file and the fix', async () => {
    const { directory } = await savedCopy('flipped');
    const weightsPath = join(directory, 'weights.bin');
    const bytes = await readFile(weightsPath);
    bytes[17]! ^= 0x01;
    await writeFile(weightsPath, bytes);
    const failure = await loadModel(directory).catch((error: unknown) => error);
    expect(failure).toBeInstanceOf(RaretideError);
    expect((failure as RaretideError).code).toBe('model.corrupt');
    expect((failure as RaretideError).message).toMatch(/weights\.bin.*sha256.*[Rr]efit/);
  });

  it('refuses a manifest edited by hand', async () => {
    const { directory } = await savedCopy('edited');
    const manifestPath = join(directory, 'manifest.json');
    const manifest = JSON.parse(await readFile(manifestPath, 'utf8'));
    manifest.model.hyperParameters.latent = 4;
    await writeFile(manifestPath, JSON.stringify(manifest));
    await expect(loadModel(directory)).rejects.toMatchObject({ code: 'model.corrupt', message: expect.stringMatching(/manifest\.json/) });
  });

  it('refuses a model other than the one expected', async () => {
    const { directory } = await savedCopy('unexpected');
    await expect(loadModel(directory, { expectedId: '0123456789abcdef' })).rejects.toMatchObject({ code: 'model.mismatch' });
  });

  it('does not overwrite an existing directory unless asked', async () => {
    const { directory, id } = await savedCopy('existing');
    await expect(saveModel(directory, bundle)).rejects.toThrow(/already exists/);
    expect(await saveModel(directory, bundle, { overwrite: true })).toBe(id);
  });

  it('reports a missing model with the command that makes one', async () => {
    await expect(loadModel(join(workspace, 'nowhere'))).rejects.toMatchObject({ code: 'model.missing', message: expect.stringMatching(/raretide fit/) });
  });
});
