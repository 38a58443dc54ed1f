export {
  Oversampler,
  designStages,
  stageTransitionWidth,
  INPUT_LIMIT,
  PASSBAND_EDGE_OF_BASE_RATE,
  STAGE_ATTENUATION_DB,
  type OversamplerOptions,
  type OversamplingFactor,
  type OversamplingQuality,
} from './oversampler.ts';
export {
  besselI0,
  designEllipticHalfband,
  designKaiserHalfband,
  firStopbandPeak,
  type EllipticHalfbandDesign,
  type HalfbandDesign,
  type KaiserHalfbandDesign,
} from './halfbandDesign.ts';
export { FirHalfbandStage, IirHalfbandStage, makeStage, type HalfbandStage } from './halfbandStages.ts';
