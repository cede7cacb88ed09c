// Lint rules: the recommended sets of ESLint and typescript-eslint, plus a ban on
// reading process.env outside the configuration module (configuration is read once).
import js from '@eslint/js';
import tseslint from 'typescript-eslint';
import globals from 'globals';

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**', 'coverage/**', 'demo-feed/**', 'bench-results/**'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
      'no-console': 'off',
    },
  },
  { files: ['src/web/static/**/*.js'], languageOptions: { globals: globals.browser } },
  { files: ['scripts/**/*.mjs', 'src/**/*.mjs', 'eslint.config.js'], languageOptions: { globals: globals.node } },
  {
    files: ['src/**/*.ts'],
    ignores: ['src/config/**'],
    rules: {
      'no-restricted-properties': ['error', { object: 'process', property: 'env', message: 'Read the environment in src/config only.' }],
    },
  },
);
