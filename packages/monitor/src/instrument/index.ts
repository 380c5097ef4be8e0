/**
 * Instrument-fault detectors, reported apart from efficiency alerts: gauge/absolute pressure
 * mix-ups (a lasting step of one ambient pressure, an implausible absolute pressure).
 */
export {
  type AbsolutePressureCheck,
  type AbsolutePressureContext,
  AMBIENT_PRESSURE_RANGE,
  checkAbsolutePressurePlausible,
  checkAmbientPressure,
  detectGaugeAbsoluteStep,
  type GaugeAbsoluteCause,
  type GaugeAbsoluteDirection,
  type GaugeAbsoluteFinding,
  type GaugeAbsoluteInput,
  type GaugeAbsoluteOptions,
} from './gauge-absolute.js';
export {
  type PressureRatioConsistency,
  type PressureRatioHypothesis,
  type PressureRatioInput,
  type PressureRatioOptions,
  pressureRatioConsistency,
} from './pressure-ratio.js';
