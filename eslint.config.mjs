// Lint: the recommended JavaScript and TypeScript rule sets, plus a ban on eval-like code.
import js from "@eslint/js";
import tseslint from "typescript-eslint";

export default tseslint.config(
  { ignores: ["node_modules/", "dist/", "coverage/", "build/"] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    rules: {
      "no-eval": "error",
      "no-implied-eval": "error",
      "no-new-func": "error",
      "@typescript-eslint/no-unused-vars": ["error", { argsIgnorePattern: "^_" }],
    },
  },
  { files: ["*.js", "*.cjs"], languageOptions: { sourceType: "commonjs", globals: { module: "writable", require: "readonly" } } },
);
