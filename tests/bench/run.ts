import os from 'node:os';
import { benchAnalysis } from './analysis.js';
import { benchIngest } from './ingest.js';
import { benchImport } from './import.js';
import { benchAnalysisLoad } from './analysisLoad.js';
import { benchRecord } from './record.js';
import { benchScale } from './scale.js';

// `npm run bench`: every performance figure of the performance targets in README and DEVELOPERS.md, printed, never asserted.
// Run on an otherwise idle machine: the figures are wall-clock times.
console.log(`Driftbench benchmarks — Node ${process.version}, ${os.cpus().length} cores, load ${os.loadavg()[0].toFixed(2)}`);
await benchAnalysis();
await benchIngest();
await benchImport();
await benchAnalysisLoad();
await benchRecord();
await benchScale();
