// Coalesces chart redraws: any number of `invalidate()` calls between frames give one redraw, at
// most one per `minIntervalMs`, on an animation frame. Redraws are wrapped in performance marks
// ('fw-redraw:<name>') when the page is opened with localStorage 'fw-perf' = '1' (the benchmark).

const perfEnabled = typeof localStorage !== 'undefined' && localStorage.getItem('fw-perf') === '1';

export class FrameGate {
  private dirty = false;
  private raf = 0;
  private timer: ReturnType<typeof setTimeout> | null = null;
  private last = 0;
  private stopped = false;

  constructor(
    private readonly name: string,
    private readonly minIntervalMs: number,
    private readonly draw: () => void,
  ) {}

  invalidate(): void {
    if (this.stopped) return;
    this.dirty = true;
    if (this.raf || this.timer) return;
    const wait = this.last + this.minIntervalMs - performance.now();
    if (wait > 0) this.timer = setTimeout(() => this.schedule(), wait);
    else this.schedule();
  }

  private schedule(): void {
    this.timer = null;
    this.raf = requestAnimationFrame(() => {
      this.raf = 0;
      if (!this.dirty || this.stopped) return;
      this.dirty = false;
      this.last = performance.now();
      if (perfEnabled) performance.mark(`fw-start:${this.name}`);
      this.draw();
      if (perfEnabled) performance.measure(`fw-redraw:${this.name}`, `fw-start:${this.name}`);
    });
  }

  stop(): void {
    this.stopped = true;
    if (this.raf) cancelAnimationFrame(this.raf);
    if (this.timer) clearTimeout(this.timer);
  }
}
