import { defineConfig } from 'vitest/config';
import vue from '@vitejs/plugin-vue';

// Three suites: pure unit tests (Node, happy-dom for components), API tests against a real
// PostgreSQL (each file creates its own database from a migrated template), and browser tests
// driving Debian's Chromium. scripts/test.ts starts the throwaway cluster they need.
export default defineConfig({
  plugins: [vue()],
  test: {
    projects: [
      {
        extends: true,
        test: {
          name: 'unit',
          include: ['tests/unit/**/*.test.ts'],
          environment: 'node',
        },
      },
      {
        extends: true,
        test: {
          name: 'api',
          include: ['tests/api/**/*.test.ts'],
          environment: 'node',
          testTimeout: 30_000,
          hookTimeout: 60_000,
        },
      },
      {
        extends: true,
        test: {
          name: 'e2e',
          include: ['tests/e2e/**/*.test.ts'],
          environment: 'node',
          fileParallelism: false,
          testTimeout: 120_000,
          hookTimeout: 180_000,
        },
      },
    ],
  },
});
