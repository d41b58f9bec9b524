/**
 * Builds the core and its balance controller from config sections: the one wiring `run` and `replay`
 * share, so the two commands cannot drift apart in how they plan, sample or tag.
 */
import type { BalanceConfig } from '../../config/sections/balance.js';
import type { LabelConfig } from '../../config/sections/label.js';
import type { RateCapConfig } from '../../config/sections/rate-cap.js';
import type { Framing } from '../avro/framing.js';
import type { PayloadDecoder } from '../avro/payload-decoder.js';
import { BalanceController } from './balance.js';
import { PipelineCore } from './core.js';
import type { DecodedEntry } from './decode-stage.js';
import { KeyedUniform } from './keyed-uniform.js';
import { TokenBucket, type Clock } from './rate-limit.js';
import type { Synthesizer } from './synthesizer.js';

export interface PipelineSettings {
  readonly label: LabelConfig;
  readonly balance: BalanceConfig;
  readonly includeOriginals: boolean;
  /** See `PipelineCoreOptions.originalsAsRead`. @default false */
  readonly originalsAsRead?: boolean;
  /** Input framing and reader schema. */
  readonly decoder: PayloadDecoder;
  readonly outputFraming: Framing;
  readonly synthesizer: Synthesizer;
  /** Absent: no rate cap. */
  readonly rateCap?: RateCapConfig;
  /** For the rate cap and model timings. */
  readonly clock: Clock;
  /** See `PipelineCoreOptions.onDecoded`. */
  readonly onDecoded?: (entries: readonly DecodedEntry[]) => void;
}

export interface AssembledPipeline {
  readonly core: PipelineCore;
  readonly balance: BalanceController;
  /** The bucket the runner waits on (rate cap policy `wait`); absent otherwise. */
  readonly rateWait: TokenBucket | undefined;
}

export function assemblePipeline(settings: PipelineSettings): AssembledPipeline {
  const { balance: balanceConfig, rateCap, clock } = settings;
  const balance = new BalanceController(
    { targets: balanceConfig.targets, maxPerRecord: balanceConfig.maxPerRecord, counting: balanceConfig.counting },
    new KeyedUniform(balanceConfig.seed),
  );
  const bucket = rateCap === undefined ? undefined : new TokenBucket({ perSecond: rateCap.perSecond, burst: rateCap.burst }, clock);
  const core = new PipelineCore({
    decoder: settings.decoder,
    outputFraming: settings.outputFraming,
    label: settings.label,
    balance,
    synthesizer: settings.synthesizer,
    sampling: { seed: balanceConfig.seed, temperature: balanceConfig.temperature },
    includeOriginals: settings.includeOriginals,
    originalsAsRead: settings.originalsAsRead === true,
    ...(bucket !== undefined && rateCap?.whenExceeded === 'thin' ? { thinning: bucket } : {}),
    clock,
    onDecoded: settings.onDecoded,
  });
  return { core, balance, rateWait: rateCap?.whenExceeded === 'wait' ? bucket : undefined };
}
