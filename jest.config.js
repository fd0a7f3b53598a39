/** Jest runs the TypeScript sources directly through ts-jest. */
module.exports = {
  testEnvironment: "node",
  roots: ["<rootDir>/test"],
  testMatch: ["**/*.test.ts"],
  transform: {
    "^.+\\.ts$": ["ts-jest", { tsconfig: "tsconfig.json", diagnostics: { warnOnly: false } }],
    // hyparquet (the pane's Parquet reader) ships ES modules only: compiled to CommonJS for jest.
    "/node_modules/hyparquet/.+\\.js$": ["ts-jest", { tsconfig: { allowJs: true, module: "commonjs", target: "ES2020" }, diagnostics: false }],
  },
  transformIgnorePatterns: ["/node_modules/(?!hyparquet/)"],
  testTimeout: 60000,
  setupFiles: ["<rootDir>/test/setup/customFunctionsShim.ts"],
  // Stops the ClickHouse test server when a suite started it (test/helpers/requirements.ts).
  globalTeardown: "<rootDir>/test/clickhouse/teardown.js",
  // office-addin-mock reaches an ESM-only module through office-addin-manifest; use its CommonJS entry.
  moduleNameMapper: { "^office-addin-manifest$": "<rootDir>/node_modules/office-addin-manifest/lib/officeApp.js" },
};
