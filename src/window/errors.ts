// The usage error now lives in src/errors/usage-error.ts (the core and the CLI share it);
// this re-export serves the modules still naming the old place until they move over.
export { quoteValue, UsageError } from '../errors/usage-error.js';
