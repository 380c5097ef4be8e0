import { afterEach, beforeEach, vi } from 'vitest';

// A console call in a test is a failure: output stays meaningful, and a stray log
// (a forgotten debug print, a library warning) is seen at once.
const methods = ['log', 'info', 'warn', 'error', 'debug'] as const;
const calls: string[] = [];

beforeEach(() => {
  calls.length = 0;
  for (const method of methods) {
    vi.spyOn(console, method).mockImplementation((...args: unknown[]) => {
      calls.push(`console.${method}: ${args.map(String).join(' ')}`);
    });
  }
});

afterEach(() => {
  vi.restoreAllMocks();
  if (calls.length > 0) {
    const seen = calls.splice(0).join('\n');
    throw new Error(`The test wrote to the console (not allowed in tests):\n${seen}`);
  }
});
