import os from 'node:os';
import { benchAnalysis } from './analysis.js';
import { benchIngest } from './ingest.js';
import { benchIngestProfile } from './ingestProfile.js';
import { benchIngestCpu } from './ingestCpu.js';
import { benchLive } from './live.js';
import { benchImport } from './import.js';
import { benchAnalysisLoad } from './analysisLoad.js';
import { benchRecord } from './record.js';
import { benchOneStream, benchScale } from './scale.js';
import { benchChart } from './chart.js';
import { benchPendingStore } from './pendingStore.js';
import { benchFinishLoad } from './finishLoad.js';
import { benchStarted, printSummary } from './summary.js';

// `npm run bench`: every performance figure of the performance targets in README and DEVELOPERS.md, printed, never asserted.
// Run on an otherwise idle machine: the figures are wall-clock times.
console.log(
  `Driftbench benchmarks — Node ${process.version}, ${os.cpus().length} cores, load ${os.loadavg()[0].toFixed(2)}`,
);
// `npm run bench -- analysisLoad scale` runs only the named benches (all of them by default).
const BENCHES: Record<string, () => Promise<unknown>> = {
  analysis: benchAnalysis,
  ingest: benchIngest,
  import: benchImport,
  analysisLoad: benchAnalysisLoad,
  record: benchRecord,
  scale: benchScale,
  chart: benchChart,
  pendingStore: benchPendingStore,
  // Run only when named: the live path alone, and where one stream's ingest time goes.
  live: benchLive,
  ingestProfile: benchIngestProfile,
  // The server's CPU per reading before the database (plausibility judge, binary decode).
  ingestCpu: benchIngestCpu,
  // The one-stream figures of `scale` alone (issue 15), for quick before/after runs.
  oneStream: benchOneStream,
  // A large capture's finish and the server's event loop meanwhile (issue 15).
  finishLoad: benchFinishLoad,
};
const chosen = process.argv.slice(2);
const unknown = chosen.filter((name) => !(name in BENCHES));
if (unknown.length) {
  console.error(
    `Unknown bench ${unknown.join(', ')}; choose from ${Object.keys(BENCHES).join(', ')}.`,
  );
  process.exit(2);
}
for (const [name, run] of Object.entries(BENCHES)) {
  const byName =
    name === 'live' ||
    name === 'ingestProfile' ||
    name === 'oneStream' ||
    name === 'ingestCpu' ||
    name === 'finishLoad';
  if ((chosen.length === 0 && !byName) || chosen.includes(name)) {
    benchStarted(name);
    await run();
  }
}
// The closing table: every figure with a target that the benches above recorded (summary.ts).
printSummary();
