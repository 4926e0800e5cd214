import path from 'node:path';
import { readFileSync } from 'node:fs';
import ts from 'typescript';
import { PROJECT_ROOT } from '../../server/index.js';

/**
 * The client's IndexedDB pending store (src/api/indexedDbStore.ts) as a script for a page:
 * evaluating it defines `window.DriftbenchPendingStore` with the module's exports, so a browser
 * test or bench drives the very code the bench page runs, in a real Chromium. The module imports
 * only types, so transpiling the one file is enough (the check below says so if that changes).
 */
export function pendingStoreScript(): string {
  const file = path.join(PROJECT_ROOT, 'src/api/indexedDbStore.ts');
  const out = ts.transpileModule(readFileSync(file, 'utf8'), {
    compilerOptions: { module: ts.ModuleKind.CommonJS, target: ts.ScriptTarget.ES2022 },
    fileName: file,
  });
  if (/\brequire\(/.test(out.outputText))
    throw new Error('src/api/indexedDbStore.ts now imports code: bundle it instead of transpiling');
  return `(() => { const exports = {}; ${out.outputText}\n window.DriftbenchPendingStore = exports; })();`;
}
