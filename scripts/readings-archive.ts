import path from 'node:path';
import { parseArgs } from 'node:util';
import { loadConfig } from '../server/config.js';
import { openDatabase } from '../server/db/connection.js';
import { startCluster, type LocalCluster } from '../server/db/cluster.js';
import { PROJECT_ROOT } from '../server/index.js';
import { AppError } from '../server/errors.js';
import {
  archiveReadingBlock,
  attachReadingBlock,
  listReadingBlocks,
  READINGS_BLOCK,
  type ReadingBlock,
} from '../server/services/partitions.js';

// `npm run readings:archive -- <command>`: the partitions of readings, a block of 1,000 captures
// each (server/services/partitions.ts).
//   list [--older-than DAYS]                 every block: captures, readings, size, archivable or why not
//   detach BLOCK [--older-than DAYS]         take a finished block out, keeping its tables
//   dump BLOCK --dir FOLDER [--older-than D] take it out, pg_dump both tables to FOLDER, drop them
//   attach BLOCK                             put a detached (or restored) block back
// DATABASE_URL names the database; without it, the project's own local cluster (as npm start).
const USAGE = `Usage: npm run readings:archive -- list|detach BLOCK|dump BLOCK --dir FOLDER|attach BLOCK [--older-than DAYS]
  A block holds captures BLOCK·${READINGS_BLOCK} … BLOCK·${READINGS_BLOCK}+${READINGS_BLOCK - 1}. --older-than (default 90): every capture of the block ended at least this many days ago.`;

const { values, positionals } = parseArgs({
  allowPositionals: true,
  options: {
    'older-than': { type: 'string', default: '90' },
    dir: { type: 'string' },
    help: { type: 'boolean', short: 'h' },
  },
});
const [command, blockArg] = positionals;
const olderThanDays = Number(values['older-than']);
const block = blockArg === undefined ? NaN : Number(blockArg);
if (
  values.help ||
  !['list', 'detach', 'dump', 'attach'].includes(command ?? '') ||
  !Number.isFinite(olderThanDays) ||
  olderThanDays < 0 ||
  (command !== 'list' && !(Number.isInteger(block) && block >= 0)) ||
  (command === 'dump' && !values.dir)
) {
  console.error(USAGE);
  process.exit(2);
}

const config = loadConfig();
let cluster: LocalCluster | undefined;
let url = config.databaseUrl;
if (!url) {
  cluster = startCluster(
    path.join(path.resolve(PROJECT_ROOT, config.dataDir), 'postgres'),
    config.localPgPort,
    () => undefined,
  );
  url = cluster.url('driftbench');
}
const db = openDatabase(url, { poolMax: 2 });
const mb = (bytes: number) => `${(bytes / 1e6).toFixed(1)} MB`;
const row = (b: ReadingBlock) =>
  [
    String(b.block).padStart(6),
    `${b.firstCaptureId}–${b.lastCaptureId}`.padEnd(12),
    b.status.padEnd(9),
    String(b.captures).padStart(8),
    b.readings.toLocaleString('en-US').padStart(14),
    mb(b.bytes).padStart(10),
    (b.lastEndedAt ? b.lastEndedAt.toISOString().slice(0, 10) : '—').padEnd(11),
    b.archivable ? 'yes' : `no: ${b.reason}`,
  ].join('  ');

let code = 0;
try {
  if (command === 'list') {
    const blocks = await listReadingBlocks(db.pool, { olderThanDays });
    console.log(
      ` block  capture ids   status     captures        readings        size  last ended   archivable (ended ≥ ${olderThanDays} days ago)`,
    );
    for (const b of blocks) console.log(row(b));
  } else if (command === 'attach') {
    await attachReadingBlock(db.pool, block);
    console.log(`Block ${block} is attached: its captures' readings are back in the app.`);
  } else {
    const r = await archiveReadingBlock(db.pool, block, {
      mode: command as 'detach' | 'dump',
      olderThanDays,
      actor: `cli:${process.env.USER ?? 'unknown'}`,
      dumpDir: values.dir,
      databaseUrl: url,
    });
    console.log(
      r.how === 'dumped'
        ? `Block ${block}: ${r.captures} captures, ${r.readings.toLocaleString('en-US')} readings dumped to ${r.dumpFile} and dropped (${mb(r.bytes)} freed).`
        : `Block ${block}: ${r.captures} captures, ${r.readings.toLocaleString('en-US')} readings detached; kept as ${r.readingsTable} and ${r.tilesTable} (${mb(r.bytes)}).`,
    );
  }
} catch (err) {
  console.error(err instanceof AppError ? err.message : err);
  code = 1;
} finally {
  await db.close();
  if (cluster && !cluster.reused) cluster.stop();
}
process.exit(code);
