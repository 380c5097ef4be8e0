import { describe, expect, it } from 'vitest';
import { INGEST_ERRORS, IngestError } from './errors.js';

describe('ingest errors', () => {
  it('every code is documented and carries its values', () => {
    for (const [code, doc] of Object.entries(INGEST_ERRORS)) {
      expect(code).toMatch(/^INGEST_[A-Z_]+$/);
      expect(doc.meaning.length).toBeGreaterThan(10);
    }
    const e = new IngestError('INGEST_BUFFER_FULL', 'full', { limitBytes: 10 });
    expect(e).toMatchObject({ code: 'INGEST_BUFFER_FULL', details: { limitBytes: 10 }, name: 'IngestError' });
  });
});
