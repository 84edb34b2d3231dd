import js from '@eslint/js';
import tseslint from 'typescript-eslint';

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**', '.dendrolog/**', '**/out/**'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
      'no-constant-condition': ['error', { checkLoops: false }],
    },
  },
  {
    // a name a user chose may be "constructor" or "__proto__": `name in record` finds those on every
    // plain object, so looking a computed name up must go through Object.hasOwn (core/dict.ts)
    files: ['core/**/*.ts', 'runner/**/*.ts', 'steps/**/*.ts', 'models/**/*.ts'],
    rules: {
      'no-restricted-syntax': [
        'error',
        {
          selector: "BinaryExpression[operator='in'][left.type!='Literal']",
          message: 'Use Object.hasOwn(record, name) (or has() from core/dict.ts): `in` also finds Object.prototype members such as "constructor".',
        },
      ],
    },
  },
  {
    files: ['bin/**/*.js'],
    languageOptions: { globals: { process: 'readonly', console: 'readonly' } },
  },
);
