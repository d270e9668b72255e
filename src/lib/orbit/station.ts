import type { GeodeticLocation } from 'satellite.js';

/** A ground station: where it stands (geodetic, WGS-84) and the elevation it can track down to. */
export interface GroundStation {
  readonly latitude_deg: number;
  readonly longitude_deg: number;
  readonly altitude_m: number;
  readonly elevationMask_deg: number;
  /** The same place in the units satellite.js takes: radians and kilometres. */
  readonly geodetic: Readonly<GeodeticLocation>;
}

function requireFinite(name: string, value: number): void {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new RangeError(`${name} must be a finite number (got ${String(value)})`);
  }
}

/** Build a ground station from degrees and metres, as the stations table stores them. */
export function stationFromDegrees(
  latitude_deg: number,
  longitude_deg: number,
  altitude_m: number,
  elevationMask_deg: number,
): GroundStation {
  requireFinite('latitude_deg', latitude_deg);
  requireFinite('longitude_deg', longitude_deg);
  requireFinite('altitude_m', altitude_m);
  requireFinite('elevation_mask_deg', elevationMask_deg);
  if (latitude_deg < -90 || latitude_deg > 90) {
    throw new RangeError(`latitude_deg must be between -90 and 90 (got ${latitude_deg})`);
  }
  if (longitude_deg < -180 || longitude_deg > 360) {
    throw new RangeError(`longitude_deg must be between -180 and 360 (got ${longitude_deg})`);
  }
  if (altitude_m < -500 || altitude_m > 10_000) {
    throw new RangeError(`altitude_m must be between -500 and 10000 (got ${altitude_m})`);
  }
  if (elevationMask_deg < -10 || elevationMask_deg >= 90) {
    throw new RangeError(`elevation_mask_deg must be at least -10 and below 90 (got ${elevationMask_deg})`);
  }
  const deg = Math.PI / 180;
  return Object.freeze({
    latitude_deg,
    longitude_deg,
    altitude_m,
    elevationMask_deg,
    geodetic: Object.freeze({ latitude: latitude_deg * deg, longitude: longitude_deg * deg, height: altitude_m / 1000 }),
  });
}
