// Type-aware lint for every TypeScript file of the project (src, bin, workers, bench, tests).
import eslint from '@eslint/js';
import tseslint from 'typescript-eslint';
import unicorn from 'eslint-plugin-unicorn';

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**', 'runs/**', '**/*.mjs', '**/*.cjs', 'eslint.config.js'] },
  eslint.configs.recommended,
  ...tseslint.configs.recommendedTypeChecked,
  {
    languageOptions: {
      parserOptions: { project: './tsconfig.tests.json', tsconfigRootDir: import.meta.dirname },
    },
    plugins: { unicorn },
    rules: {
      // One naming style for every code file (src, bin, workers, tests, bench): camelCase.
      'unicorn/filename-case': ['error', { case: 'camelCase' }],
      // A leading underscore marks a binding kept on purpose (a field dropped from a rest copy, a
      // callback argument the signature requires).
      '@typescript-eslint/no-unused-vars': [
        'error',
        { argsIgnorePattern: '^_', varsIgnorePattern: '^_', ignoreRestSiblings: true },
      ],
    },
  },
  {
    // Tests read the program's JSON output and assert on its shape: values parsed from JSON are
    // untyped by nature there, so the unsafe-any rules would only add casts that assert nothing.
    files: ['tests/**/*.ts'],
    rules: {
      '@typescript-eslint/no-unsafe-member-access': 'off',
      '@typescript-eslint/no-unsafe-assignment': 'off',
      '@typescript-eslint/no-unsafe-argument': 'off',
      '@typescript-eslint/no-unsafe-call': 'off',
      '@typescript-eslint/no-unsafe-return': 'off',
      '@typescript-eslint/no-explicit-any': 'off',
      // Stubs stand in for async functions and must return promises without awaiting anything.
      '@typescript-eslint/require-await': 'off',
    },
  },
);
