// Lint rules for the whole tree. The pure core (chance/, window/, judge/) may not
// reach for node: modules, Kafka, prom-client or Ink (DEVELOPERS.md, "Layout"), and only
// cli/ may end the process. keys/ (hot keys versus placement) is pure too; it may use
// the chance engine, judge/ types and the seeded draws of scenario/, and the core
// imports nothing from it (judge/ defines the seam it implements).
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
        '**/keys/**',
      ],
      message: 'The pure core imports only inward.',
    },
  ],
};

const keyAnalysisBans = {
  patterns: [
    ...pureCoreBans.patterns.slice(0, 2),
    {
      group: [
        '**/ingest/**',
        '**/exporter/**',
        '**/ui/**',
        '**/cli/**',
        '**/record/**',
        '**/review/**',
      ],
      message: 'Key analysis imports only inward (chance/, window/, judge/, scenario/ draws).',
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
  {
    // The errors every layer throws: the root class and the usage error. Importing
    // nothing of the project keeps them safe for the core to import.
    files: ['src/errors/**'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            ...pureCoreBans.patterns.slice(0, 2),
            { group: ['../*'], message: 'src/errors/ imports nothing of the project.' },
          ],
        },
      ],
    },
  },
  {
    files: ['src/keys/**'],
    rules: { 'no-restricted-imports': ['error', keyAnalysisBans] },
  },
);
