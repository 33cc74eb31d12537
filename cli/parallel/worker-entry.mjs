// Worker threads start without the TypeScript loader the main thread has; register it, then load the worker.
import { register } from 'tsx/esm/api';

register();
await import('./input-worker.ts');
