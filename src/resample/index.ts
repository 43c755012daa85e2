/** The resampling layer: seeded streams, bootstrap indices, block length, normal and Wishart draws. */
export { createDrawStream, streamKey, STREAM_PURPOSE, type RandomStream, type Seed, type StreamPurpose } from './streams.js';
export {
  drawBootstrapIndices,
  gatherRows,
  iidBootstrapIndices,
  stationaryBootstrapIndices,
  type BootstrapScheme,
} from './bootstrap.js';
export { stationaryBootstrapMeanVariance } from './bootstrap-variance.js';
export {
  historyMeanBlockLength,
  optimalBlockLength,
  type BlockLengthRule,
  type BlockLengths,
  type HistoryBlockLength,
} from './block-length.js';
/** The PSD-tolerant Cholesky factor the parametric draws use (now src/linalg/dense.ts's choleskyPsd). */
export { choleskyPsd as lowerCholesky } from '../linalg/dense.js';
export { drawCorrelatedNormal, drawFactorNormal, drawIndependentNormal } from './normal.js';
export { drawScaledChiSquare, drawWishart } from './wishart.js';
export {
  createParametricScratch,
  createResampledRiskModel,
  drawParametricInputs,
  drawParametricMean,
  drawParametricRiskModel,
  prepareParametricBase,
  type DenseParametricBase,
  type FactorParametricBase,
  type ParametricBase,
  type ParametricBaseInput,
  type ParametricScratch,
} from './parametric.js';
