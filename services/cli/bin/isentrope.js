#!/usr/bin/env node
// Runs the TypeScript sources directly (source-first workspaces: no build step).
import { register } from 'tsx/esm/api';

register();
await import('../src/main.ts');
