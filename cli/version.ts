import { readFileSync } from 'node:fs';

/** The project folder: this file sits one level below it, in cli/ as a source and in dist/ when bundled. */
export const PROJECT_ROOT = new URL('../', import.meta.url);

const pkg = JSON.parse(readFileSync(new URL('package.json', PROJECT_ROOT), 'utf8')) as { name: string; version: string };

export const TOOL = { name: pkg.name, version: pkg.version };
