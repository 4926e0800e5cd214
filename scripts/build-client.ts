import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';

/** Newest modification time under `p` (a file or a folder), ignoring nothing but node_modules. */
function newest(p: string): number {
  if (!existsSync(p)) return 0;
  const st = statSync(p);
  if (!st.isDirectory()) return st.mtimeMs;
  let max = st.mtimeMs;
  for (const name of readdirSync(p)) {
    if (name === 'node_modules') continue;
    max = Math.max(max, newest(path.join(p, name)));
  }
  return max;
}

/** Builds the client with Vite when dist/ is missing or older than its sources. */
export function buildClientIfStale(root: string, log: (line: string) => void = console.log): void {
  const built = path.join(root, 'dist', 'index.html');
  const sources = ['src', 'shared', 'public', 'index.html', 'vite.config.ts', 'package.json'].map(
    (p) => newest(path.join(root, p)),
  );
  if (existsSync(built) && statSync(built).mtimeMs >= Math.max(...sources)) return;
  log('Building the client (vite build)…');
  const vite = path.join(root, 'node_modules', 'vite', 'bin', 'vite.js');
  const r = spawnSync(process.execPath, [vite, 'build', '--logLevel', 'warn'], {
    cwd: root,
    stdio: 'inherit',
  });
  if (r.status !== 0) throw new Error('The client build failed (see above).');
}
