/** Jest runs the TypeScript sources directly through ts-jest. */
module.exports = {
  testEnvironment: "node",
  roots: ["<rootDir>/test"],
  testMatch: ["**/*.test.ts"],
  transform: {
    "^.+\\.ts$": ["ts-jest", { tsconfig: "tsconfig.json", diagnostics: { warnOnly: false } }],
  },
  testTimeout: 60000,
};
