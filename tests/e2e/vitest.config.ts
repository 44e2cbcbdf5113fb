import { defineConfig } from 'vitest/config';

// Browser and HTTP tests against the built server (`scripts/serve.js`, as `npm start`) on 127.0.0.1, one server for the run.
export default defineConfig({
	test: {
		include: ['tests/e2e/**/*.e2e.ts'],
		globalSetup: ['tests/e2e/global-setup.ts'],
		testTimeout: 60_000,
		hookTimeout: 300_000,
		fileParallelism: false,
		pool: 'forks'
	}
});
