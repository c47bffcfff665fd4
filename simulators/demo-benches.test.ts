import { describe, expect, it } from 'vitest';
import { benchIdSchema, channelKeySchema, gatewayIdSchema } from '../src/lib/contract/wire.ts';
import { DEMO_BENCHES, createDemoSimulator, findDemoBench } from './demo-benches.ts';
import { validateModel } from './interferometer.ts';

describe('demo benches', () => {
  it('have distinct ids and gateways of the contract’s form', () => {
    expect(DEMO_BENCHES.length).toBeGreaterThanOrEqual(2);
    expect(new Set(DEMO_BENCHES.map((b) => b.id)).size).toBe(DEMO_BENCHES.length);
    expect(new Set(DEMO_BENCHES.map((b) => b.gateway)).size).toBe(DEMO_BENCHES.length);
    expect(new Set(DEMO_BENCHES.map((b) => b.wavelengthNm)).size).toBe(DEMO_BENCHES.length);
    for (const b of DEMO_BENCHES) {
      expect(benchIdSchema.safeParse(b.id).success).toBe(true);
      expect(gatewayIdSchema.safeParse(b.gateway).success).toBe(true);
      expect(b.description).not.toMatch(/\n/);
      expect(findDemoBench(b.id)).toBe(b);
    }
  });

  it('list exactly the simulator’s channels, with one out_a and one out_b', () => {
    for (const b of DEMO_BENCHES) {
      validateModel(b.model);
      const keys = b.channels.map((c) => c.key);
      for (const k of keys) expect(channelKeySchema.safeParse(k).success).toBe(true);
      expect(keys.sort()).toEqual([...createDemoSimulator(b).channels].sort());
      expect(b.channels.filter((c) => c.role === 'out_a').map((c) => c.key)).toEqual([b.model.channels.a]);
      expect(b.channels.filter((c) => c.role === 'out_b').map((c) => c.key)).toEqual([b.model.channels.b]);
      expect(b.scan).toEqual({ ...b.model.scan, unit: 'V' });
    }
  });

  it('run at realistic visibility, below a few hundred kc/s and under 10% dead-time loss', () => {
    for (const b of DEMO_BENCHES) {
      const sim = createDemoSimulator(b);
      expect(b.model.optics.visibility).toBeGreaterThanOrEqual(0.95);
      expect(b.model.optics.visibility).toBeLessThanOrEqual(0.99);
      for (const delta of [0, Math.PI]) {
        for (const rate of Object.values(sim.expectedRates(delta).ch)) expect(rate).toBeLessThan(300_000);
      }
      const { a, b: out } = b.model.detectors;
      const bright = b.model.source.kind === 'coherent' ? b.model.source.photonRate : b.model.source.pairRate;
      for (const d of [a, out]) {
        const n = bright * d.efficiency + d.darkRate; // true rate at a bright fringe, 1/s
        expect(n * d.deadTimeNs * 1e-9).toBeLessThan(0.1);
      }
      // A fringe every few to a few tens of volts: several fringes fit in the scan range.
      const fringes = (b.scan.max - b.scan.min) / sim.truth().periodV;
      expect(fringes).toBeGreaterThan(3);
      expect(fringes).toBeLessThan(30);
    }
  });
});
