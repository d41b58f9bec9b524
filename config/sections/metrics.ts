import * as z from 'zod';
import { nonEmptyString } from './common.js';

export const metricsSection = z
  .object({
    /**
     * Serve Prometheus metrics, `/healthz` and `/readyz`.
     * @default true
     */
    enabled: z.boolean().default(true).meta({ description: 'Serve Prometheus metrics, `/healthz` and `/readyz`.' }),
    /**
     * Address to listen on; the loopback default keeps metrics off the network until you choose otherwise.
     * @default 127.0.0.1
     */
    host: nonEmptyString().default('127.0.0.1').meta({ description: 'Address to listen on (loopback unless you open it).', examples: ['0.0.0.0'] }),
    /**
     * TCP port; 0 picks a free one.
     * @default 9464
     */
    port: z.int().min(0).max(65535).default(9464).meta({ description: 'TCP port; 0 picks a free one.' }),
  })
  .strict()
  .meta({ description: 'The HTTP endpoint for metrics and health probes.' });

export type MetricsConfig = z.infer<typeof metricsSection>;
