import * as z from 'zod';
import { dottedPath, nonEmptyString } from './common.js';

export const labelSection = z
  .discriminatedUnion('from', [
    z
      .object({
        /** The class is a field of the record. */
        from: z.literal('field').meta({ description: 'The class is a field of the record.' }),
        /** Dotted path of the class field, e.g. `outcome` or `status.code`. */
        path: dottedPath().meta({ description: 'Dotted path of the class field.', examples: ['outcome'] }),
      })
      .strict(),
    z
      .object({
        /** The class is a message header (UTF-8). */
        from: z.literal('header').meta({ description: 'The class is a message header (UTF-8).' }),
        /** Header name. */
        name: nonEmptyString().meta({ description: 'Header name.', examples: ['event-class'] }),
      })
      .strict(),
    z
      .object({
        /** The class is the message key (UTF-8). */
        from: z.literal('key').meta({ description: 'The class is the message key (UTF-8).' }),
      })
      .strict(),
  ])
  .meta({ description: 'Where each record\'s class comes from: a field, a header or the key.' });

export type LabelConfig = z.infer<typeof labelSection>;
