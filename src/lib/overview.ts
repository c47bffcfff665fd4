// One bench as the lab overview lists it (plain data for the overview island).
import type { RunView } from './runs.ts';

export interface OverviewBench {
  id: string;
  name: string;
  wavelengthNm: number;
  description: string;
  gatewaysOnline: number;
  gatewaysTotal: number;
  openAlarms: number;
  criticalAlarms: number;
  activeRun: RunView | null;
}
