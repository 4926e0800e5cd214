import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, mkdirSync, readFileSync, chmodSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { freePort, startCluster, destroyCluster, type LocalCluster } from '../server/db/cluster.js';
import { ensureDatabase, openDatabase } from '../server/db/connection.js';
import { migrate } from '../server/migrations/index.js';
import { PROJECT_ROOT } from '../server/index.js';
import { buildClientIfStale } from './build-client.js';

// `npm test`: a throwaway PostgreSQL cluster in a temporary folder, a migrated template database
// that every API test file copies, the unit and API suites, then the browser suite in Chromium.
// The cluster is removed even when tests fail. Extra arguments are passed to Vitest as filters.
const CHROMIUM = '/usr/bin/chromium';
const TEMPLATE = 'driftbench_template';
const resultsDir = path.join(PROJECT_ROOT, 'test-results');
mkdirSync(resultsDir, { recursive: true });

function ensureChromium(): void {
  if (existsSync(CHROMIUM)) return;
  const root = process.getuid?.() === 0;
  if (root && existsSync('/etc/debian_version')) {
    console.log('Chromium not found: installing Debian\'s "chromium" package with apt…');
    const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
    for (const args of [
      ['update', '-qq'],
      ['install', '-y', '-qq', 'chromium'],
    ]) {
      const r = spawnSync('apt-get', args, { env, stdio: 'inherit' });
      if (r.status !== 0) throw new Error(`apt-get ${args.join(' ')} failed`);
    }
    return;
  }
  throw new Error(
    `The browser tests need Chromium at ${CHROMIUM}. Install it with: sudo apt-get install -y chromium`,
  );
}

/** The report test prints to PDF and reads it back with poppler's pdftoppm/pdftotext/pdfinfo. */
function ensurePoppler(): void {
  const have = ['pdftoppm', 'pdftotext', 'pdfinfo'].every(
    (tool) => spawnSync(tool, ['-v'], { stdio: 'ignore' }).error === undefined,
  );
  if (have) return;
  const root = process.getuid?.() === 0;
  if (root && existsSync('/etc/debian_version')) {
    console.log('pdftoppm not found: installing Debian\'s "poppler-utils" package with apt…');
    const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
    for (const args of [
      ['update', '-qq'],
      ['install', '-y', '-qq', 'poppler-utils'],
    ]) {
      const r = spawnSync('apt-get', args, { env, stdio: 'inherit' });
      if (r.status !== 0) throw new Error(`apt-get ${args.join(' ')} failed`);
    }
    return;
  }
  throw new Error(
    'The report test needs pdftoppm and pdftotext. Install them with: sudo apt-get install -y poppler-utils',
  );
}

interface Counts {
  passed: number;
  failed: number;
  skipped: number;
}

function vitest(
  projects: string[],
  jsonFile: string,
  filters: string[],
  env: NodeJS.ProcessEnv,
): { status: number; counts: Counts } {
  const bin = path.join(PROJECT_ROOT, 'node_modules', 'vitest', 'vitest.mjs');
  const args = [
    bin,
    'run',
    ...projects.flatMap((p) => ['--project', p]),
    '--reporter=default',
    '--reporter=json',
    `--outputFile.json=${jsonFile}`,
    '--passWithNoTests',
    ...filters,
  ];
  const r = spawnSync(process.execPath, args, { cwd: PROJECT_ROOT, stdio: 'inherit', env });
  const counts: Counts = { passed: 0, failed: 0, skipped: 0 };
  if (existsSync(jsonFile)) {
    const report = JSON.parse(readFileSync(jsonFile, 'utf8')) as {
      numPassedTests: number;
      numFailedTests: number;
      numPendingTests: number;
      numTodoTests: number;
      testResults?: Array<{ status: string; assertionResults: unknown[] }>;
    };
    counts.passed = report.numPassedTests;
    counts.failed = report.numFailedTests;
    counts.skipped = report.numPendingTests + report.numTodoTests;
    // A file that failed to load has no assertion results but did fail.
    counts.failed += (report.testResults ?? []).filter(
      (f) => f.status === 'failed' && f.assertionResults.length === 0,
    ).length;
  } else if (r.status !== 0) {
    counts.failed += 1;
  }
  return { status: r.status ?? 1, counts };
}

/**
 * The lint gate (`npm run lint`: ESLint, then Prettier's check). A full run starts with it and
 * fails when it fails; a run with filters skips it (set DRIFTBENCH_LINT=1 to lint anyway).
 */
function lint(): boolean {
  console.log('Lint: npm run lint (ESLint, then Prettier --check)…');
  const r = spawnSync('npm', ['run', '--silent', 'lint'], { cwd: PROJECT_ROOT, stdio: 'inherit' });
  const ok = r.status === 0;
  console.log(
    ok ? 'Lint: clean.' : 'Lint: FAILED (see above); the tests still run, the run fails.',
  );
  return ok;
}

let cluster: LocalCluster | undefined;
let exitCode = 1;
const cleanup = () => {
  if (cluster) {
    destroyCluster(cluster);
    cluster = undefined;
  }
};
process.on('SIGINT', () => {
  cleanup();
  process.exit(130);
});

try {
  const filters = process.argv.slice(2);
  const lintOk = filters.length === 0 || process.env.DRIFTBENCH_LINT === '1' ? lint() : true;
  if (filters.length > 0 && process.env.DRIFTBENCH_LINT !== '1')
    console.log('Lint skipped for a filtered run (npm run lint runs it).');
  const tmp = mkdtempSync(path.join(os.tmpdir(), 'driftbench-test-'));
  chmodSync(tmp, 0o755);
  cluster = startCluster(path.join(tmp, 'pg'), await freePort(), () => {});
  const admin = cluster.url('postgres');
  await ensureDatabase(admin, TEMPLATE);
  const db = openDatabase(cluster.url(TEMPLATE));
  await migrate(db.sequelize);
  await db.close();
  console.log(`Test PostgreSQL on 127.0.0.1:${cluster.port} (template "${TEMPLATE}" migrated)`);

  const env = {
    ...process.env,
    NO_COLOR: '1',
    NODE_ENV: 'test',
    DRIFTBENCH_TEST_PG: admin,
    DRIFTBENCH_TEST_TEMPLATE: TEMPLATE,
  };
  const main = vitest(['unit', 'api'], path.join(resultsDir, 'vitest-main.json'), filters, env);

  let e2e = { status: 0, counts: { passed: 0, failed: 0, skipped: 0 } };
  const runE2e = filters.length === 0 || filters.some((f) => f.includes('e2e'));
  if (runE2e) {
    ensureChromium();
    ensurePoppler();
    buildClientIfStale(PROJECT_ROOT);
    e2e = vitest(['e2e'], path.join(resultsDir, 'vitest-e2e.json'), filters, env);
  }
  const passed = main.counts.passed + e2e.counts.passed;
  // A failed lint counts as one failure, so the closing line never reads clean when it was not.
  const failed = main.counts.failed + e2e.counts.failed + (lintOk ? 0 : 1);
  const skipped = main.counts.skipped + e2e.counts.skipped;
  console.log(`\n${passed} passed, ${failed} failed, ${skipped} skipped`);
  exitCode = lintOk && main.status === 0 && e2e.status === 0 && failed === 0 ? 0 : 1;
} catch (err) {
  console.error(err instanceof Error ? err.message : err);
  exitCode = 1;
} finally {
  cleanup();
}
process.exit(exitCode);
