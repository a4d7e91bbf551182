// Curves for the monitor page on Chart.js (Debian's libjs-chart.js, served by
// the daemon): a stress–strain and a force–time plot with event marks, and a
// curve of a stored run. Without the library the page still shows values.
'use strict';

const Plots = (() => {
  const have = typeof Chart !== 'undefined';
  const colours = { curve: '#1f7a74', band: 'rgba(31,122,116,0.25)', event: '#a33a2a', past: '#c98a12' };

  function make(canvas, xLabel, yLabel, colour) {
    if (!have) return null;
    return new Chart(canvas.getContext('2d'), {
      type: 'scatter',
      data: { datasets: [
        { label: 'curve', data: [], showLine: true, borderColor: colour, borderWidth: 1.5, pointRadius: 0 },
        { label: 'events', data: [], showLine: false, pointRadius: 6, pointStyle: 'triangle',
          backgroundColor: colours.event, borderColor: colours.event },
      ] },
      options: {
        animation: false, parsing: false, normalized: true, maintainAspectRatio: false,
        scales: { x: { type: 'linear', title: { display: true, text: xLabel } },
                  y: { type: 'linear', title: { display: true, text: yLabel } } },
        plugins: {
          legend: { display: false },
          tooltip: { callbacks: { label: (c) => c.raw.tag ? `${c.raw.tag}: ${c.raw.y.toFixed(1)}` : `${c.raw.x.toFixed(3)}, ${c.raw.y.toFixed(1)}` } },
        },
      },
    });
  }

  // Keeps a redraw to at most five per second however fast points arrive.
  function throttled(chart) {
    let pending = false;
    return () => {
      if (!chart || pending) return;
      pending = true;
      setTimeout(() => { pending = false; chart.update('none'); }, 200);
    };
  }

  class Live {
    constructor(ssCanvas, ftCanvas) {
      this.ss = make(ssCanvas, 'strain, %', 'stress, MPa', colours.curve);
      this.ft = make(ftCanvas, 'time from arming, s', 'force, kN', colours.curve);
      this.redrawSs = throttled(this.ss);
      this.redrawFt = throttled(this.ft);
    }
    clear() {
      for (const c of [this.ss, this.ft]) if (c) { c.data.datasets[0].data = []; c.data.datasets[1].data = []; c.update('none'); }
    }
    point(p) {
      if (this.ss && p.strain_pct != null && p.stress_MPa != null) {
        this.ss.data.datasets[0].data.push({ x: p.strain_pct, y: p.stress_MPa });
        this.redrawSs();
      }
      if (this.ft && p.time_s != null && p.force_N != null) {
        // The newest frame of each 20 ms; the window's min/max stay in the message.
        this.ft.data.datasets[0].data.push({ x: p.time_s, y: p.force_N / 1000 });
        this.redrawFt();
      }
    }
    // Fills in what a run recorded before this page connected (stored frames).
    backfill(frames, events) {
      const b = frames.buckets;
      for (let i = 0; i < b.from_s.length; i++) {
        if (this.ss && b.strain_max_pct[i] != null) this.ss.data.datasets[0].data.push({ x: b.strain_max_pct[i], y: b.stress_max_MPa[i] });
        if (this.ft && b.force_max_N[i] != null) this.ft.data.datasets[0].data.push({ x: (b.from_s[i] + b.to_s[i]) / 2, y: b.force_max_N[i] / 1000 });
      }
      for (const e of events) this.event(e);
      this.redrawSs();
      this.redrawFt();
    }
    event(e) {
      if (this.ss && e.strain_pct != null) {
        this.ss.data.datasets[1].data.push({ x: e.strain_pct, y: e.stress_MPa, tag: e.label || e.kind });
        this.ss.update('none');
      }
    }
  }

  function past(canvas, frames, events) {
    if (!have) return null;
    if (canvas._chart) canvas._chart.destroy();
    const c = make(canvas, 'strain (extensometer), %', 'stress, MPa', colours.past);
    const b = frames.buckets;
    const pts = [];
    for (let i = 0; i < b.from_s.length; i++) {
      if (b.strain_max_pct[i] != null && b.stress_max_MPa[i] != null) pts.push({ x: b.strain_max_pct[i], y: b.stress_max_MPa[i] });
    }
    c.data.datasets[0].data = pts;
    c.data.datasets[1].data = events.filter((e) => e.strain_pct != null && e.stress_MPa)
      .map((e) => ({ x: e.strain_pct, y: e.stress_MPa, tag: e.label || e.kind }));
    c.update('none');
    canvas._chart = c;
    return c;
  }

  return { have, Live, past };
})();
