import * as z from 'zod';

export const logSection = z
  .object({
    /**
     * Least severe level written.
     * @default info
     */
    level: z.enum(['error', 'warn', 'info', 'debug']).default('info').meta({ description: 'Least severe level written.' }),
    /**
     * `json` (one object per line, for collectors) or `text` (for people); `--log-format` overrides it.
     * @default json
     */
    format: z.enum(['json', 'text']).default('json').meta({ description: '`json` (one object per line) or `text`; `--log-format` overrides it.' }),
  })
  .strict()
  .meta({ description: 'Log level and format.' });

export type LogConfig = z.infer<typeof logSection>;
