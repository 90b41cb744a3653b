// Starts a worker thread's TypeScript entry from the sources (tests only): registers tsx
// in this thread, then loads the entry named in the worker's `argv`.
import { register } from 'tsx/esm/api';

register();
await import(process.argv[2]);
