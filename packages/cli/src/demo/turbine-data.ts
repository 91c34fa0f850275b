import { createRng, type Rng } from "@nightshift/core";

/**
 * The demo scenario (our own, invented for the demo only): predictive maintenance of wind
 * turbines. One row per turbine and week; the target says whether the turbine's gearbox
 * failed within the next 30 days. Failures are rare (about 3%) and announce themselves
 * weakly and noisily: oil runs hotter, vibration and metal particles in the oil rise,
 * older turbines and those long past service fail more, one model line and one site are
 * worse. Sensors drop out now and then (missing readings).
 */
export interface TurbineDataOptions {
  readonly turbines: number;
  readonly weeks: number;
  readonly seed: number | string;
}

export const TURBINE_COLUMNS = [
  "turbine_id",
  "week",
  "site",
  "model",
  "age_years",
  "hours_since_service",
  "mean_wind_speed_ms",
  "power_output_kw",
  "rotor_speed_rpm",
  "ambient_temp_c",
  "gearbox_oil_temp_c",
  "bearing_temp_c",
  "vibration_rms_mms",
  "vibration_kurtosis",
  "oil_particle_count",
  "yaw_misalignment_deg",
  "pitch_events",
  "grid_curtailed",
  "failed_within_30d",
] as const;

const SITES = ["north-ridge", "coastal-flats", "high-plateau", "river-delta", "offshore-east", "hill-farm"];
const SITE_RISK = [0, 0.25, 0.4, 0, 0.55, -0.2];
const MODELS = ["aero-2mw", "aero-3mw", "gale-4mw"];
const MODEL_RISK = [0, 0.15, 0.6];
const MISSING_RATE = 0.03;

export type TurbineRow = Record<(typeof TURBINE_COLUMNS)[number], string | number>;

function reading(rng: Rng, value: number, digits: number): number | string {
  return rng.next() < MISSING_RATE ? "" : Number(value.toFixed(digits));
}

/** Rows of the demo data set, deterministic in the seed. */
export function generateTurbineRows(options: TurbineDataOptions): TurbineRow[] {
  const rng = createRng(options.seed, "turbine-demo");
  const rows: TurbineRow[] = [];
  for (let t = 0; t < options.turbines; t++) {
    const site = rng.int(SITES.length);
    const model = rng.int(MODELS.length);
    const age = 1 + rng.next() * 19;
    const frailty = rng.normal() * 0.6;
    let hoursSinceService = rng.next() * 4000;
    let wear = 0;
    for (let w = 0; w < options.weeks; w++) {
      hoursSinceService += 168;
      if (rng.next() < 0.02) {
        hoursSinceService = rng.next() * 100; // serviced this week
        wear *= 0.3;
      }
      wear = Math.max(0, wear + 0.04 * rng.normal() + 0.01 * (age / 10) + 0.01 * frailty);
      const wind = Math.max(0, 7 + 2.5 * rng.normal() + (site === 4 ? 2 : 0));
      const curtailed = rng.next() < 0.05 ? 1 : 0;
      const power = Math.min(3000 + 1000 * model, 12 * wind ** 3) * (curtailed ? 0.6 : 1) * (1 - 0.05 * wear);
      const rotor = Math.min(16, 1.6 * wind) + 0.3 * rng.normal();
      const ambient = 10 + 8 * Math.sin((2 * Math.PI * w) / 52) + 3 * rng.normal() - (site === 2 ? 6 : 0);
      const risk =
        -5.95 + frailty + SITE_RISK[site] + MODEL_RISK[model] + 0.05 * age + 1.6 * wear + 0.00012 * hoursSinceService + (curtailed ? -0.3 : 0);
      const failed = rng.next() < 1 / (1 + Math.exp(-risk)) ? 1 : 0;
      const warning = failed ? 1 : 0;
      const oilTemp = 55 + 0.4 * ambient + 0.004 * power / 10 + 4 * wear + 3 * warning * rng.next() + 2.5 * rng.normal();
      const bearingTemp = 45 + 0.3 * ambient + 0.6 * rotor + 2.5 * wear + 1.5 * rng.normal();
      const vibration = Math.max(0.3, 2 + 0.08 * rotor + 1.2 * wear + 1.0 * warning * rng.next() + 0.5 * rng.normal());
      const kurtosis = Math.max(1.5, 3 + 0.8 * wear + 1.5 * warning * rng.next() + 0.6 * rng.normal());
      const particles = Math.max(0, Math.round(40 * Math.exp(0.5 * wear + 0.6 * warning * rng.next() + 0.35 * rng.normal())));
      rows.push({
        turbine_id: `T${String(t + 1).padStart(4, "0")}`,
        week: w + 1,
        site: SITES[site],
        model: MODELS[model],
        age_years: Number(age.toFixed(1)),
        hours_since_service: Math.round(hoursSinceService),
        mean_wind_speed_ms: reading(rng, wind, 2),
        power_output_kw: reading(rng, power, 0),
        rotor_speed_rpm: reading(rng, rotor, 2),
        ambient_temp_c: reading(rng, ambient, 1),
        gearbox_oil_temp_c: reading(rng, oilTemp, 1),
        bearing_temp_c: reading(rng, bearingTemp, 1),
        vibration_rms_mms: reading(rng, vibration, 3),
        vibration_kurtosis: reading(rng, kurtosis, 3),
        oil_particle_count: reading(rng, particles, 0),
        yaw_misalignment_deg: reading(rng, Math.abs(4 * rng.normal()), 2),
        pitch_events: Math.max(0, Math.round(20 + 8 * rng.normal() + 6 * wear)),
        grid_curtailed: curtailed ? "yes" : "no",
        failed_within_30d: failed ? "yes" : "no",
      });
    }
  }
  return rows;
}
