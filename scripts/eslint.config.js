// Lint rules for the whole tree. The pure core (chance/, window/, judge/) may not
// reach for node: modules, Kafka, prom-client or Ink (ARCHITECTURE.md), and only
// cli/ may end the process.
import tseslint from 'typescript-eslint';

const pureCoreBans = {
  patterns: [
    { group: ['node:*'], message: 'The pure core imports no node: module.' },
    {
      group: ['kafkajs', 'prom-client', 'ink', 'ink-*', 'react'],
      message: 'The pure core does no I/O.',
    },
    {
      group: [
        '**/ingest/**',
        '**/exporter/**',
        '**/ui/**',
        '**/cli/**',
        '**/record/**',
        '**/review/**',
        '**/scenario/**',
      ],
      message: 'The pure core imports only inward.',
    },
  ],
};

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**'] },
  ...tseslint.configs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_' }],
      'no-restricted-properties': [
        'error',
        { object: 'process', property: 'exit', message: 'Only src/cli/ decides the exit code.' },
      ],
    },
  },
  {
    files: ['src/cli/**', 'scripts/**', 'bench/**', 'test/**'],
    rules: { 'no-restricted-properties': 'off' },
  },
  {
    files: ['src/chance/**', 'src/window/**', 'src/judge/**', 'src/partials/**'],
    rules: { 'no-restricted-imports': ['error', pureCoreBans] },
  },
);
