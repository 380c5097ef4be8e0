/** Writes ERRORS.md from the error registry (scripts/error-registry.ts). */
import { writeFileSync } from 'node:fs';
import { renderErrorsDoc } from './error-registry.js';

writeFileSync(new URL('../ERRORS.md', import.meta.url), renderErrorsDoc());
