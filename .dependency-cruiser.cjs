/**
 * Layering rules for raretide (see DEVELOPERS.md): each layer only looks down.
 *   config/  → nothing of ours
 *   model/   → config/, model/
 *   connector/ → anything but tests; its pipeline core never touches node-rdkafka
 *   deploy/  → config/ and itself (the local broker launcher)
 * plus no import cycles anywhere.
 */
module.exports = {
  forbidden: [
    {
      name: 'no-cycles',
      severity: 'error',
      comment: 'Import cycles make layers meaningless; break the cycle by moving the shared piece down.',
      from: {},
      to: { circular: true },
    },
    {
      name: 'config-imports-nothing-of-ours',
      severity: 'error',
      comment: 'config/ is the bottom layer: the zod schema and root errors import no other layer.',
      from: { path: '^config/' },
      to: { path: '^(model|connector|deploy|test)/' },
    },
    {
      name: 'model-knows-no-kafka',
      severity: 'error',
      comment: 'model/ (features, VAE, sampling, quality) is usable without Kafka: it may import config/ and itself only.',
      from: { path: '^model/' },
      to: { path: '^(connector|deploy|test)/|node-rdkafka' },
    },
    {
      name: 'pipeline-core-knows-no-rdkafka',
      severity: 'error',
      comment: 'The pipeline core talks to sources and sinks through interfaces; Kafka lives in connector/kafka/.',
      from: { path: '^connector/pipeline/' },
      to: { path: 'node-rdkafka|^connector/(kafka|cli)/' },
    },
    {
      name: 'product-code-never-imports-tests',
      severity: 'error',
      from: { path: '^(config|model|connector|deploy)/' },
      to: { path: '^test/' },
    },
  ],
  options: {
    doNotFollow: { path: 'node_modules' },
    tsPreCompilationDeps: true,
    tsConfig: { fileName: 'tsconfig.json' },
    enhancedResolveOptions: { extensions: ['.ts', '.js'] },
  },
};
