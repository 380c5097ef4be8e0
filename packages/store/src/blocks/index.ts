export { bucketSeries, percentileCont, type SeriesBucket } from './aggregate.js';
export { type BlockRow, blockRow, cutBlocks, MAX_BLOCK_SAMPLES } from './block-rows.js';
export { type SeriesColumns, type UsColumns, usToMs } from './columns.js';
export { BLOCKS_LOCK_CLASS } from './locks.js';
export { type BlockWriteConflict, mergeRowsIntoColumns, type RefRow, sameBits } from './merge.js';
export {
  DEFAULT_PACK_AGE_MS,
  type PackOptions,
  type PackProgress,
  type PackReport,
  packCutoff,
  packSamples,
} from './pack.js';
export { readSeries, type SeriesSource } from './read.js';
export { rollupStageFromSeries, seriesRows } from './rollup-source.js';
export { type MergeOutcome, mergeIntoBlocks, routePackedRows } from './route.js';
