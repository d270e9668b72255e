export {
  PropagationError,
  TleError,
  describeSatRecError,
  julianDateFromUnixMs,
  lookAngles,
  parseTle,
  propagateEci,
  tleChecksum,
  type EciState,
  type LookAngles,
  type ParseTleOptions,
  type Satellite,
  type Vec3,
} from './sgp4';
export { DEFAULT_PASS_STEP_MS, findPasses, type FindPassesOptions, type Pass } from './passes';
export { stationFromDegrees, type GroundStation } from './station';
export { brentRoot, goldenSectionMaximum } from './refine';
