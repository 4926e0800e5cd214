// Driftbench's lint gate (`npm run lint`, run first by `npm test`): ESLint's and typescript-eslint's
// recommended rules, eslint-plugin-vue's for the SFCs, the import boundaries between the three
// halves of the code, and Prettier's formatting left to Prettier (eslint-config-prettier).
// Import cycles are kept out by tests/unit/importCycles.test.ts (it builds the import graph).
import js from '@eslint/js';
import tseslint from 'typescript-eslint';
import vue from 'eslint-plugin-vue';
import vueParser from 'vue-eslint-parser';
import prettier from 'eslint-config-prettier';
import globals from 'globals';

/** `shared/` is isomorphic: it may import neither the browser app nor the server. */
const NOT_FROM_SRC = {
  group: ['**/src/**', '@/*'],
  message: 'shared/ and server/ never import the browser app (src/).',
};
const NOT_FROM_SERVER = {
  group: ['**/server/**'],
  message: 'shared/ and src/ never import the server (server/).',
};

export default tseslint.config(
  {
    ignores: [
      'dist/**',
      'node_modules/**',
      'test-results/**',
      'coverage/**',
      'public/**',
      '**/*.d.ts',
    ],
  },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  ...vue.configs['flat/recommended'],
  {
    files: ['**/*.vue'],
    languageOptions: {
      parser: vueParser,
      parserOptions: {
        parser: tseslint.parser,
        ecmaVersion: 'latest',
        sourceType: 'module',
        extraFileExtensions: ['.vue'],
      },
    },
  },
  {
    languageOptions: {
      ecmaVersion: 'latest',
      sourceType: 'module',
      globals: { ...globals.node, ...globals.browser },
    },
    rules: {
      // `_`-prefixed names are deliberately unused (placeholders, rest siblings).
      '@typescript-eslint/no-unused-vars': [
        'error',
        {
          argsIgnorePattern: '^_',
          varsIgnorePattern: '^_',
          caughtErrors: 'none',
          ignoreRestSiblings: true,
        },
      ],
      // Casts at the edges (JSON, Sequelize raw rows) are typed as `unknown` first where it matters.
      '@typescript-eslint/no-explicit-any': 'off',
      '@typescript-eslint/no-non-null-assertion': 'off',
      // Our SFC style: one-word view names are route pages (`App`, `Home`), props may be mutated by v-model helpers.
      'vue/multi-word-component-names': 'off',
      'vue/require-default-prop': 'off',
      'no-constant-condition': ['error', { checkLoops: false }],
    },
  },
  {
    files: ['shared/**/*.ts'],
    rules: { 'no-restricted-imports': ['error', { patterns: [NOT_FROM_SRC, NOT_FROM_SERVER] }] },
  },
  {
    files: ['src/**/*.ts', 'src/**/*.vue'],
    rules: { 'no-restricted-imports': ['error', { patterns: [NOT_FROM_SERVER] }] },
  },
  {
    files: ['server/**/*.ts'],
    rules: { 'no-restricted-imports': ['error', { patterns: [NOT_FROM_SRC] }] },
  },
  {
    files: ['tests/**/*.ts', 'scripts/**/*.ts'],
    rules: { '@typescript-eslint/no-unused-expressions': 'off' },
  },
  prettier,
  {
    // Layout is Prettier's; this one is not switched off by eslint-config-prettier.
    rules: { 'vue/first-attribute-linebreak': 'off' },
  },
);
