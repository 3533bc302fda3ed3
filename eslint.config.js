// One lint config for the whole repo: typescript-eslint + eslint-plugin-vue, Prettier owns formatting.
import js from '@eslint/js'
import prettier from 'eslint-config-prettier'
import vue from 'eslint-plugin-vue'
import globals from 'globals'
import tseslint from 'typescript-eslint'

const layer = (patterns, message) => ['error', { patterns: patterns.map((group) => ({ group, message })) }]

export default tseslint.config(
  {
    ignores: [
      'dist/**',
      'data/**',
      'node_modules/**',
      'db/migrations/**',
      'tests/.artifacts/**',
      'coverage/**',
    ],
  },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  ...vue.configs['flat/recommended'],
  {
    files: ['**/*.vue'],
    languageOptions: { parserOptions: { parser: tseslint.parser } },
  },
  {
    languageOptions: { globals: { ...globals.browser, ...globals.node } },
    rules: {
      '@typescript-eslint/consistent-type-imports': ['error', { fixStyle: 'inline-type-imports' }],
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
      'no-console': ['error', { allow: ['warn', 'error'] }],
      'vue/multi-word-component-names': 'off',
    },
  },
  {
    files: ['shared/**/*.ts'],
    rules: {
      'no-restricted-imports': layer(
        [
          [
            '@/*',
            '#db/*',
            '#shared/*',
            '**/src/**',
            '**/server/**',
            '**/db/**',
            'node:*',
            'dexie',
            'vue',
            'express',
          ],
        ],
        'shared/ is pure: it imports zod and other shared/ files only.',
      ),
    },
  },
  {
    files: ['src/**/*.{ts,vue}'],
    rules: {
      'no-restricted-imports': layer(
        [['#db/*', '**/server/**', '**/db/**', 'express', 'better-sqlite3', 'drizzle-orm', 'drizzle-orm/*']],
        'The client never imports the server or the database layer.',
      ),
    },
  },
  {
    files: ['src/components/**/*.{ts,vue}'],
    rules: {
      'no-restricted-imports': layer(
        [['@/idb/*', '@/api/*', '@/sync/*', '#db/*', '**/server/**', '**/db/**']],
        'Components take props and emit events; composables and stores reach idb/, api/ and sync/.',
      ),
    },
  },
  {
    files: ['src/sync/**/*.ts'],
    rules: {
      'no-restricted-imports': layer(
        [['vue', 'pinia', 'quasar', '@/components/*', '@/stores/*']],
        'sync/ has no Vue.',
      ),
    },
  },
  {
    files: ['tests/**/*.ts'],
    rules: {
      '@typescript-eslint/no-non-null-assertion': 'off',
      'no-restricted-properties': [
        'error',
        ...['describe', 'it', 'test'].map((object) => ({
          object,
          property: 'only',
          message: 'Focused tests must not be committed.',
        })),
      ],
    },
  },
  prettier,
)
