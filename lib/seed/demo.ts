/**
 * The demo scenario: invented companies, plants, people and tags (no real names or data).
 *
 * - "Vantrell Controls", a controls contractor, looks after two client plants: the Marrow Fen
 *   board mill and the Skellbrook water works.
 * - "Orrin Vale Chemicals", an operating company, runs the Tarnbeck works and the Lowdry terminal.
 *
 * Each loop comes with the continuous plant the simulator runs (normalised units: % of PV span per
 * % of MV span; dead time in seconds) and the name of its drift scenario (simulators/scenarios),
 * exported as data in DEMO_PLANTS. Tunings follow the SIMC rules (S. Skogestad, "Simple analytic
 * rules for model reduction and PID controller tuning", J. Process Control 13, 2003) for the
 * plant the simulator runs, then rounded and written in the units each site uses.
 */
import type { LoopKind, LoopSummary, Role } from "@/lib/domain/types";
import { tuningSeconds, type ControllerAction, type ControllerForm } from "@/lib/domain/tuning";
import type { GainKind, TdUnits, TiUnits } from "@/models/loop";

export const DEMO_PASSWORD = "rimguard-demo";

export interface DemoTenant {
  slug: string;
  name: string;
  domain: string;
  sites: { slug: string; name: string; timeZone: string; areas: { slug: string; name: string }[] }[];
}

export const DEMO_TENANTS: DemoTenant[] = [
  {
    slug: "vantrell",
    name: "Vantrell Controls",
    domain: "vantrell.example",
    sites: [
      {
        slug: "marrow-fen",
        name: "Marrow Fen Board Mill",
        timeZone: "Europe/London",
        areas: [
          { slug: "stock-prep", name: "Stock Preparation" },
          { slug: "dryers", name: "Dryer Section" },
        ],
      },
      {
        slug: "skellbrook",
        name: "Skellbrook Water Works",
        timeZone: "Europe/London",
        areas: [
          { slug: "intake", name: "Intake and Filtration" },
          { slug: "treated-water", name: "Treated Water" },
        ],
      },
    ],
  },
  {
    slug: "orrin-vale",
    name: "Orrin Vale Chemicals",
    domain: "orrinvale.example",
    sites: [
      {
        slug: "tarnbeck",
        name: "Tarnbeck Works",
        timeZone: "Europe/Berlin",
        areas: [
          { slug: "reactors", name: "Reactors" },
          { slug: "distillation", name: "Distillation" },
        ],
      },
      {
        slug: "lowdry",
        name: "Lowdry Terminal",
        timeZone: "America/Chicago",
        areas: [
          { slug: "tank-farm", name: "Tank Farm and Loading" },
          { slug: "utilities", name: "Utilities" },
        ],
      },
    ],
  },
];

export interface DemoAccount {
  email: string;
  name: string;
  tenant: string;
  role: Role;
}

/** Every demo sign-in (password DEMO_PASSWORD). Dana Keswick belongs to both tenants. */
export const DEMO_ACCOUNTS: DemoAccount[] = [
  { email: "viewer@vantrell.example", name: "Ines Farrow", tenant: "vantrell", role: "viewer" },
  { email: "operator@vantrell.example", name: "Tomas Brell", tenant: "vantrell", role: "operator" },
  { email: "engineer@vantrell.example", name: "Dana Keswick", tenant: "vantrell", role: "engineer" },
  { email: "admin@vantrell.example", name: "Ruth Alderby", tenant: "vantrell", role: "admin" },
  { email: "viewer@orrinvale.example", name: "Owen Pardoe", tenant: "orrin-vale", role: "viewer" },
  { email: "operator@orrinvale.example", name: "Mira Hallam", tenant: "orrin-vale", role: "operator" },
  { email: "engineer@orrinvale.example", name: "Kofi Ashdown", tenant: "orrin-vale", role: "engineer" },
  { email: "admin@orrinvale.example", name: "Lena Strand", tenant: "orrin-vale", role: "admin" },
  // The contractor's engineer also works on the client's plants under a membership of its own.
  { email: "engineer@vantrell.example", name: "Dana Keswick", tenant: "orrin-vale", role: "engineer" },
];

/** The simulator's continuous plant, in the simulator's own format (simulators/scenario.ts). */
export type DemoPlantModel =
  | { type: "first-order"; gain: number; timeConstantS: number; deadTimeS: number }
  | { type: "second-order"; gain: number; naturalFrequency: number; zeta: number; deadTimeS: number }
  | { type: "integrating"; gain: number; lagS: number; deadTimeS: number };

/** Drift scenarios of simulators/scenarios/*.json; null = steady (noise, load and set-point moves only). */
export type DemoDrift =
  | "gain-creep"
  | "dead-time-growth"
  | "sticky-valve"
  | "saturation"
  | "manual-switch"
  | "frozen-sensor"
  | null;

export interface DemoPlant {
  tenantSlug: string;
  siteSlug: string;
  tag: string;
  plant: DemoPlantModel;
  drift: DemoDrift;
  /** Operating point: set point in % of PV span, MV in % of MV span. */
  spPct: number;
  mvPct: number;
  /** The loop's controller in seconds: `tuningSeconds()` of the stored loop row (site units converted). */
  controller: { kp: number; ti: number | null; td: number; tf: number; action: ControllerAction; form: ControllerForm };
}

/** Site conventions for writing tuning: gain or proportional band; Ti in s, min or repeats/min. */
const SITE_UNITS: Record<string, { gainKind: GainKind; tiUnits: TiUnits; tdUnits: TdUnits }> = {
  "marrow-fen": { gainKind: "pb", tiUnits: "min", tdUnits: "min" },
  skellbrook: { gainKind: "gain", tiUnits: "s", tdUnits: "s" },
  tarnbeck: { gainKind: "gain", tiUnits: "repeats-per-min", tdUnits: "min" },
  lowdry: { gainKind: "gain", tiUnits: "s", tdUnits: "s" },
};

interface LoopDef {
  tenant: string;
  site: string;
  area: string;
  tag: string;
  description: string;
  kind: LoopKind;
  units: string;
  pv: [number, number];
  mvUnits?: string;
  telemetryPeriodS: number;
  plant: DemoPlantModel;
  drift: DemoDrift;
  /** SIMC closed-loop time constant tau_c in seconds (tighter = faster, less margin). */
  tauC: number;
  /** Add derivative action Td = theta / 2 (common practice for lag-dominant temperature loops). */
  pid?: boolean;
  spPct?: number;
  mvPct?: number;
}

const fo = (gain: number, timeConstantS: number, deadTimeS: number): DemoPlantModel => ({
  type: "first-order",
  gain,
  timeConstantS,
  deadTimeS,
});
const so = (gain: number, naturalFrequency: number, zeta: number, deadTimeS: number): DemoPlantModel => ({
  type: "second-order",
  gain,
  naturalFrequency,
  zeta,
  deadTimeS,
});
const int = (gain: number, lagS: number, deadTimeS: number): DemoPlantModel => ({ type: "integrating", gain, lagS, deadTimeS });

const LOOP_DEFS: LoopDef[] = [
  // Vantrell Controls / Marrow Fen Board Mill
  { tenant: "vantrell", site: "marrow-fen", area: "stock-prep", tag: "FIC-1101", description: "Thick stock flow to machine chest", kind: "flow", units: "m3/h", pv: [0, 250], telemetryPeriodS: 0.2, plant: fo(1.1, 2.5, 0.4), drift: "sticky-valve", tauC: 0.8 },
  { tenant: "vantrell", site: "marrow-fen", area: "stock-prep", tag: "LIC-1102", description: "Machine chest level", kind: "level", units: "%", pv: [0, 100], telemetryPeriodS: 1, plant: int(0.015, 3, 1), drift: null, tauC: 40 },
  { tenant: "vantrell", site: "marrow-fen", area: "stock-prep", tag: "PIC-1103", description: "Headbox total pressure", kind: "pressure", units: "kPa", pv: [0, 60], telemetryPeriodS: 0.1, plant: so(0.9, 1.2, 0.45, 0.15), drift: "gain-creep", tauC: 1.2 },
  { tenant: "vantrell", site: "marrow-fen", area: "dryers", tag: "TIC-1201", description: "Dryer group 3 steam temperature", kind: "temperature", units: "degC", pv: [80, 180], telemetryPeriodS: 2, plant: fo(0.8, 150, 20), drift: "dead-time-growth", tauC: 20 },
  { tenant: "vantrell", site: "marrow-fen", area: "dryers", tag: "PIC-1202", description: "Dryer steam header pressure", kind: "pressure", units: "barg", pv: [0, 10], telemetryPeriodS: 0.2, plant: fo(1.3, 4, 0.4), drift: null, tauC: 0.6 },
  { tenant: "vantrell", site: "marrow-fen", area: "dryers", tag: "FIC-1203", description: "Condensate return flow", kind: "flow", units: "m3/h", pv: [0, 40], telemetryPeriodS: 0.5, plant: fo(0.9, 4, 1), drift: "saturation", tauC: 1.5, mvPct: 70 },
  // Vantrell Controls / Skellbrook Water Works
  { tenant: "vantrell", site: "skellbrook", area: "intake", tag: "FIC-2101", description: "Raw water intake flow", kind: "flow", units: "m3/h", pv: [0, 1200], telemetryPeriodS: 0.5, plant: fo(1.0, 5, 1.5), drift: "manual-switch", tauC: 2 },
  { tenant: "vantrell", site: "skellbrook", area: "intake", tag: "LIC-2102", description: "Filter inlet channel level", kind: "level", units: "m", pv: [0, 3.5], telemetryPeriodS: 1, plant: int(0.01, 0, 2), drift: null, tauC: 60 },
  { tenant: "vantrell", site: "skellbrook", area: "intake", tag: "FIC-2103", description: "Coagulant dosing flow", kind: "flow", units: "L/h", pv: [0, 80], telemetryPeriodS: 0.2, plant: fo(1.4, 1.5, 0.3), drift: "gain-creep", tauC: 0.4 },
  { tenant: "vantrell", site: "skellbrook", area: "treated-water", tag: "PIC-2201", description: "Distribution pump discharge pressure", kind: "pressure", units: "barg", pv: [0, 8], telemetryPeriodS: 0.1, plant: fo(1.2, 1.2, 0.2), drift: null, tauC: 0.3 },
  { tenant: "vantrell", site: "skellbrook", area: "treated-water", tag: "LIC-2202", description: "Clear water tank level", kind: "level", units: "%", pv: [0, 100], telemetryPeriodS: 1, plant: int(0.005, 5, 2), drift: "frozen-sensor", tauC: 120 },
  { tenant: "vantrell", site: "skellbrook", area: "treated-water", tag: "TIC-2203", description: "Sludge digester temperature", kind: "temperature", units: "degC", pv: [20, 50], telemetryPeriodS: 5, plant: fo(0.6, 900, 90), drift: null, tauC: 120 },
  // Orrin Vale Chemicals / Tarnbeck Works
  { tenant: "orrin-vale", site: "tarnbeck", area: "reactors", tag: "TIC-3101", description: "Reactor R-31 temperature (jacket cooling)", kind: "temperature", units: "degC", pv: [0, 150], telemetryPeriodS: 2, plant: fo(-0.9, 240, 30), drift: "gain-creep", tauC: 30, pid: true },
  { tenant: "orrin-vale", site: "tarnbeck", area: "reactors", tag: "FIC-3102", description: "Monomer feed flow to R-31", kind: "flow", units: "kg/h", pv: [0, 3000], telemetryPeriodS: 0.2, plant: fo(1.0, 2, 0.4), drift: null, tauC: 0.6 },
  { tenant: "orrin-vale", site: "tarnbeck", area: "reactors", tag: "PIC-3103", description: "Reactor R-31 head pressure", kind: "pressure", units: "barg", pv: [0, 16], telemetryPeriodS: 0.2, plant: so(0.7, 0.6, 0.35, 0.3), drift: "dead-time-growth", tauC: 2.5 },
  { tenant: "orrin-vale", site: "tarnbeck", area: "distillation", tag: "LIC-3201", description: "Column C-32 sump level (bottoms draw)", kind: "level", units: "%", pv: [0, 100], telemetryPeriodS: 1, plant: int(-0.02, 2, 1), drift: "sticky-valve", tauC: 30 },
  { tenant: "orrin-vale", site: "tarnbeck", area: "distillation", tag: "TIC-3202", description: "Column C-32 tray 12 temperature", kind: "temperature", units: "degC", pv: [60, 140], telemetryPeriodS: 5, plant: fo(1.2, 420, 60), drift: null, tauC: 60, pid: true },
  { tenant: "orrin-vale", site: "tarnbeck", area: "distillation", tag: "FIC-3203", description: "Column C-32 reflux flow", kind: "flow", units: "m3/h", pv: [0, 60], telemetryPeriodS: 0.3, plant: fo(1.0, 3, 0.6), drift: "saturation", tauC: 0.9, mvPct: 72 },
  // Orrin Vale Chemicals / Lowdry Terminal
  { tenant: "orrin-vale", site: "lowdry", area: "tank-farm", tag: "FIC-4101", description: "Ship loading flow, berth 2", kind: "flow", units: "m3/h", pv: [0, 2500], telemetryPeriodS: 0.5, plant: fo(1.05, 6, 1), drift: "manual-switch", tauC: 2 },
  { tenant: "orrin-vale", site: "lowdry", area: "tank-farm", tag: "LIC-4102", description: "Vapour knock-out drum level", kind: "level", units: "%", pv: [0, 100], telemetryPeriodS: 1, plant: int(0.01, 1, 1), drift: null, tauC: 40 },
  { tenant: "orrin-vale", site: "lowdry", area: "tank-farm", tag: "PIC-4103", description: "Vapour recovery header pressure", kind: "pressure", units: "kPa", pv: [0, 50], telemetryPeriodS: 0.1, plant: fo(1.5, 0.8, 0.15), drift: "gain-creep", tauC: 0.2 },
  { tenant: "orrin-vale", site: "lowdry", area: "utilities", tag: "TIC-4201", description: "Boiler feedwater temperature", kind: "temperature", units: "degC", pv: [40, 140], telemetryPeriodS: 3, plant: fo(0.7, 200, 25), drift: "frozen-sensor", tauC: 25 },
  { tenant: "orrin-vale", site: "lowdry", area: "utilities", tag: "PIC-4202", description: "Instrument air header pressure", kind: "pressure", units: "barg", pv: [0, 10], telemetryPeriodS: 0.2, plant: fo(1.0, 3, 0.3), drift: null, tauC: 0.5 },
  { tenant: "orrin-vale", site: "lowdry", area: "utilities", tag: "FIC-4203", description: "Fuel gas flow to boiler B-2", kind: "flow", units: "Nm3/h", pv: [0, 900], telemetryPeriodS: 0.25, plant: fo(1.2, 1.5, 0.25), drift: "sticky-valve", tauC: 0.5 },
];

/** Round to `digits` significant figures (tunings as a technician would type them). */
function sig(x: number, digits = 2): number {
  return Number(x.toPrecision(digits));
}

/**
 * SIMC PI(D) settings for the plant (Skogestad 2003): first order K e^{-θs}/(τs+1):
 * Kc = τ / (|K| (τc + θ)), Ti = min(τ, 4(τc + θ)); integrating k' e^{-θs}/s (with a lag τ2
 * counted as extra dead time): Kc = 1 / (|k'| (τc + θ + τ2)), Ti = 4(τc + θ + τ2); second
 * order: half the lag time counted as dead time (Skogestad's half rule on 1/ωn). Derivative,
 * when asked, Td = θ / 2 (common practice). The action follows the sign of the process gain.
 */
function simc(def: LoopDef): DemoPlant["controller"] {
  const p = def.plant;
  const action: ControllerAction = p.gain > 0 ? "reverse" : "direct";
  const K = Math.abs(p.gain);
  let kp: number;
  let ti: number;
  let theta = p.deadTimeS;
  if (p.type === "first-order") {
    kp = p.timeConstantS / (K * (def.tauC + theta));
    ti = Math.min(p.timeConstantS, 4 * (def.tauC + theta));
  } else if (p.type === "integrating") {
    theta += p.lagS;
    kp = 1 / (K * (def.tauC + theta));
    ti = 4 * (def.tauC + theta);
  } else {
    // Underdamped second order: approximate as first order with τ = 2ζ/ωn + half of 1/ωn as dead time.
    const tau = (2 * p.zeta) / p.naturalFrequency;
    theta += 0.5 / p.naturalFrequency;
    kp = tau / (K * (def.tauC + theta));
    ti = Math.min(tau, 4 * (def.tauC + theta));
  }
  const td = def.pid ? p.deadTimeS / 2 : 0;
  return { kp: sig(kp), ti: sig(ti), td: sig(td), tf: def.pid ? sig(0.1 * td) : 0, action, form: "ideal" };
}

/** Estimation period: about a fifth of the closed-loop time constant (τc + θ), a whole multiple of the telemetry period. */
function estimationPeriod(def: LoopDef): number {
  const target = 0.2 * (def.tauC + def.plant.deadTimeS);
  const n = Math.max(1, Math.round(target / def.telemetryPeriodS));
  return sig(n * def.telemetryPeriodS, 3);
}

/** A demo loop: named by slugs of its tenant, site and area, with the fields of a loop's summary and its configuration. */
export interface DemoLoop extends Pick<LoopSummary, "tag" | "slug" | "description" | "kind" | "units" | "pvLo" | "pvHi"> {
  tenant: string;
  site: string;
  area: string;
  mvUnits: string;
  telemetryPeriodS: number;
  controllerPeriodS: number;
  action: ControllerAction;
  form: ControllerForm;
  gainKind: GainKind;
  gainValue: number;
  tiValue: number | null;
  tiUnits: TiUnits;
  tdValue: number;
  tdUnits: TdUnits;
  derivativeAlpha: number | null;
  na: number;
  nb: number;
  nk: number;
  estimationPeriodS: number;
  estimationProposedS: number;
  baselineTimeConstantS: number;
}

function toLoop(def: LoopDef, c: DemoPlant["controller"]): DemoLoop {
  const u = SITE_UNITS[def.site];
  if (!u) throw new Error(`No tuning units for site ${def.site}`);
  const Te = estimationPeriod(def);
  const gainValue = u.gainKind === "pb" ? sig(100 / c.kp, 3) : c.kp;
  const tiValue = c.ti === null ? null : u.tiUnits === "s" ? c.ti : u.tiUnits === "min" ? sig(c.ti / 60, 3) : sig(60 / c.ti, 3);
  const tdValue = c.td === 0 ? 0 : u.tdUnits === "min" ? sig(c.td / 60, 3) : c.td;
  return {
    tenant: def.tenant,
    site: def.site,
    area: def.area,
    tag: def.tag,
    slug: def.tag.toLowerCase().replace(/[^a-z0-9]+/g, "-"),
    description: def.description,
    kind: def.kind,
    units: def.units,
    pvLo: def.pv[0],
    pvHi: def.pv[1],
    mvUnits: def.mvUnits ?? "%",
    telemetryPeriodS: def.telemetryPeriodS,
    controllerPeriodS: def.telemetryPeriodS,
    action: c.action,
    form: c.form,
    gainKind: u.gainKind,
    gainValue,
    tiValue,
    tiUnits: u.tiUnits,
    tdValue,
    tdUnits: u.tdUnits,
    derivativeAlpha: c.td > 0 ? 0.1 : null,
    na: 2,
    nb: 2,
    // ZOH: a dead time θ shows as 1 + floor(θ / T) samples of delay at period T.
    nk: 1 + Math.floor(def.plant.deadTimeS / Te + 1e-9),
    estimationPeriodS: Te,
    estimationProposedS: Te,
    baselineTimeConstantS: sig(def.tauC + def.plant.deadTimeS),
  };
}

const built = LOOP_DEFS.map((def) => {
  const loop = toLoop(def, simc(def));
  // What the simulator runs is exactly what the tracker reads back from the stored row.
  const controller = tuningSeconds({ ...loop, tfS: null });
  return { def, controller, loop };
});

/** The demo loops as stored (tuning in each site's units). */
export const DEMO_LOOPS: DemoLoop[] = built.map((b) => b.loop);

/** The plant each demo loop's simulator runs, keyed by tag (tags are unique across the demo). */
export const DEMO_PLANTS: Record<string, DemoPlant> = Object.fromEntries(
  built.map(({ def, controller }) => [
    def.tag,
    {
      tenantSlug: def.tenant,
      siteSlug: def.site,
      tag: def.tag,
      plant: def.plant,
      drift: def.drift,
      spPct: def.spPct ?? 55,
      mvPct: def.mvPct ?? 50,
      controller,
    },
  ]),
);

export interface DemoDevice {
  tenantSlug: string;
  siteSlug: string;
  name: string;
  clientId: string;
  keyId: string;
  /** Demo only: the simulator publishes with it. Stored hashed like any other secret. */
  secret: string;
}

/** One MQTT device credential per demo site, with known secrets for the simulator (demo only). */
export const DEMO_DEVICES: DemoDevice[] = DEMO_TENANTS.flatMap((t) =>
  t.sites.map((s) => ({
    tenantSlug: t.slug,
    siteSlug: s.slug,
    name: `Demo simulator, ${s.name}`,
    clientId: `rg-sim-${t.slug}-${s.slug}`,
    keyId: `demo-${t.slug}-${s.slug}`,
    secret: `rimguard-demo-device-${t.slug}-${s.slug}`,
  })),
);

/**
 * Default alarm levels of every demo tenant (lib/domain/alarms/policy.ts format). Decay ratio 0.35 /
 * 0.5 correspond to damping ratios of about 0.165 / 0.11 (DR = exp(-2πζ/√(1-ζ²))).
 */
export const DEMO_TENANT_POLICY = {
  decayRatio: { low: 0.35, high: 0.5 },
  minDamping: { low: 0.15, high: 0.1 },
  deadband: { decayRatio: 0.05, damping: 0.02, radius: 0.005 },
  onDelayS: 30,
  offDelayS: 60,
  shelveMaxMinutes: 480,
  forecastHorizonMinutes: 240,
};

/** Per-site and per-loop overrides that show the precedence (loop > site > tenant). */
export const DEMO_POLICY_OVERRIDES: { tenant: string; site: string; tag?: string; settings: Record<string, unknown> }[] = [
  // The water works tolerates more ringing on its slow treated-water loops.
  { tenant: "vantrell", site: "skellbrook", settings: { decayRatio: { low: 0.4, high: 0.6 } } },
  // Headbox pressure: explicit radius levels at its estimation period, set by the engineer.
  { tenant: "vantrell", site: "marrow-fen", tag: "PIC-1103", settings: { radius: { low: 0.95, high: 0.975 }, onDelayS: 10 } },
  { tenant: "orrin-vale", site: "tarnbeck", tag: "TIC-3101", settings: { decayRatio: { low: 0.3, high: 0.45 } } },
  // Reactor head pressure: commissioned at a decay ratio of about 0.5 (its tight tuning is accepted
  // here), so its levels sit above that; the alarm comes when its dead time grows (0.68 at the end).
  { tenant: "orrin-vale", site: "tarnbeck", tag: "PIC-3103", settings: { decayRatio: { low: 0.6, high: 0.75 }, minDamping: { low: 0.08, high: 0.05 } } },
];
