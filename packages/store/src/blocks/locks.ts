/**
 * Advisory locks of the blocks code. Per-tag locks are the writer's (TAG_LOCK_CLASS in
 * rollups.ts). The read guard exists because TRUNCATE is not MVCC-safe (PostgreSQL 15
 * documentation, TRUNCATE, "Notes"): a reader whose snapshot predates a pack's commit but
 * who reaches the truncated partition after it would see neither the rows nor the blocks
 * that replaced them. Readers hold the guard shared for their statement; a pack takes it
 * exclusively just before it truncates, so the window cannot open.
 */
import type pg from 'pg';

/** A class of its own: the jobs' tick locks use (0x15e7, 1..5), which TAG_LOCK_CLASS shares. */
export const BLOCKS_LOCK_CLASS = 0x15e8;
export const READ_GUARD_KEY = 0;

export const READ_GUARD_SQL = `SELECT pg_advisory_xact_lock_shared(${BLOCKS_LOCK_CLASS}, ${READ_GUARD_KEY})`;

export async function takeReadGuard(client: pg.ClientBase): Promise<void> {
  await client.query(READ_GUARD_SQL);
}

export async function takeTruncateGuard(client: pg.ClientBase): Promise<void> {
  await client.query('SELECT pg_advisory_xact_lock($1, $2)', [BLOCKS_LOCK_CLASS, READ_GUARD_KEY]);
}
