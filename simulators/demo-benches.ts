// The demo lab: three invented benches that `npm start` feeds through simulated gateways. Data
// only (plus a convenience constructor); every figure is a plausible bench value, not a device's.
import type { DetectorModel, InterferometerSim, SimulatorModel } from './interferometer.ts';
import { createSimulator } from './interferometer.ts';

export type ChannelRole = 'out_a' | 'out_b' | 'herald' | 'aux';

export interface DemoBench {
  id: string;
  name: string;
  wavelengthNm: number;
  /** One line for the bench list. */
  description: string;
  gateway: string;
  channels: { key: string; label: string; role: ChannelRole }[];
  /** As the gateway's status reports it. */
  scan: { min: number; max: number; unit: 'V' };
  /** Seed of this bench's simulator, so the demo looks the same on every start. */
  seed: number;
  model: SimulatorModel;
}

/** Thick-junction Si SPAD module (fibre-coupled) [practice figures]. */
function siSpad(efficiency: number, darkRate: number): DetectorModel {
  return { efficiency, darkRate, deadTimeNs: 22, afterpulsing: 0.005 };
}

/** Free-running InGaAs/InP SPAD: low efficiency, high darks, long dead time to tame afterpulsing. */
function ingaasSpad(efficiency: number, darkRate: number): DetectorModel {
  return { efficiency, darkRate, deadTimeNs: 10_000, afterpulsing: 0.03 };
}

const heralded810: SimulatorModel = {
  channels: { a: 'a', b: 'b', herald: 'h' },
  optics: {
    wavelengthNm: 810,
    // Retro-reflecting mirror on the piezo: one fringe per λ/2 of travel.
    pathFactor: 2,
    visibility: 0.97,
    phaseOffsetRad: 0.4,
    // Enclosed free-space bench: about one fringe of drift in 20 min (0.005 rad/s) and 0.14 rad
    // of random walk over 100 s (2e-4 rad²/s).
    driftRadPerS: 0.005,
    driftDiffusionRad2PerS: 2e-4,
  },
  // Mirror-mount stack, 3 µm over 75 V (40 nm/V): a fringe every 10.1 V.
  piezo: { nmPerVolt: 40, hysteresis: 0.12, nonlinearity: 0.02 },
  scan: { min: 0, max: 75 },
  source: {
    kind: 'heralded',
    // SPDC pairs at 1 M/s; with 20% herald efficiency ≈ 200 kc/s heralds, ≈ 36 kc/s gated at a bright output.
    pairRate: 1e6,
    g2: 0.01,
    herald: siSpad(0.2, 150),
  },
  // Signal-arm efficiency (coupling × SPAD at 810 nm), a little unbalanced as real fibres are.
  detectors: { a: siSpad(0.18, 100), b: siSpad(0.2, 250) },
  coincidenceWindowNs: 2,
};

const coherent633: SimulatorModel = {
  channels: { a: 'a', b: 'b' },
  optics: {
    wavelengthNm: 632.8,
    pathFactor: 2,
    visibility: 0.985,
    phaseOffsetRad: 2.1,
    driftRadPerS: 0.003,
    driftDiffusionRad2PerS: 1e-4,
  },
  // Long stack, 2.1 µm over 150 V (14 nm/V): a fringe every 22.6 V.
  piezo: { nmPerVolt: 14, hysteresis: 0.13, nonlinearity: 0.03 },
  scan: { min: 0, max: 150 },
  // HeNe attenuated to 4·10⁵ photons/s: ≈ 240 kc/s at the bright output, 0.5% dead-time loss.
  source: { kind: 'coherent', photonRate: 4e5 },
  detectors: { a: { ...siSpad(0.6, 50), afterpulsing: 0.008 }, b: { ...siSpad(0.62, 80), afterpulsing: 0.008 } },
  coincidenceWindowNs: 2,
};

const fibre1550: SimulatorModel = {
  channels: { a: 'a', b: 'b' },
  optics: {
    wavelengthNm: 1550,
    // Fibre stretcher: optical path ≈ 1.15 × elongation (n_eff ≈ 1.47 less the strain-optic
    // correction of ≈ 22%) [practice].
    pathFactor: 1.15,
    visibility: 0.95,
    phaseOffsetRad: -1.2,
    // Unenclosed fibre: a fringe every two minutes and a fast random walk.
    driftRadPerS: 0.05,
    driftDiffusionRad2PerS: 5e-3,
  },
  // PZT cylinder with fibre wound on it, ±10 V bipolar, 300 nm/V: a fringe every 4.5 V.
  piezo: { nmPerVolt: 300, hysteresis: 0.1, nonlinearity: 0.03 },
  scan: { min: -10, max: 10 },
  // Attenuated DFB laser at 6·10⁴ photons/s: ≈ 10 kc/s at the bright output, where the 10 µs
  // dead time already costs 9% of the counts (the fringes flatten at the top).
  source: { kind: 'coherent', photonRate: 6e4 },
  detectors: { a: ingaasSpad(0.15, 600), b: ingaasSpad(0.15, 900) },
  coincidenceWindowNs: 2,
};

/** Wavelength and scan range come from the model, so the bench list and the physics agree. */
function demo(bench: Omit<DemoBench, 'wavelengthNm' | 'scan'>): DemoBench {
  return { ...bench, wavelengthNm: bench.model.optics.wavelengthNm, scan: { ...bench.model.scan, unit: 'V' } };
}

export const DEMO_BENCHES: readonly DemoBench[] = [
  demo({
    id: 'mz-810',
    name: 'Heralded MZ, 810 nm',
    description: 'Heralded single photons from SPDC through a free-space Mach–Zehnder; outputs gated on the herald, triples in cc.',
    gateway: 'gw-810',
    channels: [
      { key: 'a', label: 'Output A (heralded)', role: 'out_a' },
      { key: 'b', label: 'Output B (heralded)', role: 'out_b' },
      { key: 'h', label: 'Herald', role: 'herald' },
    ],
    seed: 810,
    model: heralded810,
  }),
  demo({
    id: 'mz-633',
    name: 'Attenuated HeNe MZ, 633 nm',
    description: 'Attenuated helium–neon laser in a free-space Mach–Zehnder on Si SPADs; the teaching bench.',
    gateway: 'gw-633',
    channels: [
      { key: 'a', label: 'Output A', role: 'out_a' },
      { key: 'b', label: 'Output B', role: 'out_b' },
    ],
    seed: 633,
    model: coherent633,
  }),
  demo({
    id: 'mz-1550',
    name: 'Fibre MZ, 1550 nm',
    description: 'All-fibre Mach–Zehnder with a piezo fibre stretcher on InGaAs SPADs: high darks, 10 µs dead time, fast drift.',
    gateway: 'gw-1550',
    channels: [
      { key: 'a', label: 'Output A', role: 'out_a' },
      { key: 'b', label: 'Output B', role: 'out_b' },
    ],
    seed: 1550,
    model: fibre1550,
  }),
];

export function findDemoBench(id: string): DemoBench | undefined {
  return DEMO_BENCHES.find((b) => b.id === id);
}

/** The bench's simulator; pass another seed to vary a run, the bench's own by default. */
export function createDemoSimulator(bench: DemoBench, seed: number = bench.seed): InterferometerSim {
  return createSimulator(bench.model, seed);
}
