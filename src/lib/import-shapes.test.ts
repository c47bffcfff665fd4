import { describe, expect, it } from 'vitest';
import { importGatewayOf, importRunOf, seriesLabel } from './import-shapes.ts';

describe('imported series on a chart', () => {
  it('names the run of an imported channel beside its label, and leaves a live channel’s label alone', () => {
    expect(seriesLabel({ gateway: importGatewayOf(5), label: 'Output A' })).toBe('Output A (imported run 5)');
    expect(seriesLabel({ gateway: 'gw-633', label: 'Output A' })).toBe('Output A');
  });

  it('reads the run only from a pseudo-gateway', () => {
    expect(importRunOf('imp-42')).toBe(42);
    expect(importRunOf('gw-1')).toBeNull();
    expect(importRunOf('imp-')).toBeNull();
    expect(importRunOf('imp-4x')).toBeNull();
  });
});
