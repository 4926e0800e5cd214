// Entry of an analysis worker thread. The server runs its TypeScript through tsx (there is no
// build), and a worker does not inherit a loader registered by a test runner: register tsx's ESM
// loader here, then load the TypeScript worker.
import { register } from 'tsx/esm/api';

register();
await import('./worker.ts');
