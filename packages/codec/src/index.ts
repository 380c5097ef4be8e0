/**
 * @isentrope/codec: lossless compressed sample blocks (pure, no I/O, imports nothing of ours).
 * Timestamps by delta-of-delta varints, values by the XOR method of Pelkonen et al. (VLDB 2015)
 * or, where exact and smaller, decimal scaling, qualities run-length encoded.
 */
export { BLOCK_FORMAT_VERSION, blockCount, decodeBlock, encodeBlock } from './block.js';
export type { SampleColumns } from './columns.js';
export { CODEC_ERRORS, CodecError, type CodecErrorCode } from './errors.js';
