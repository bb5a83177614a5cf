// Sweeps: start one, follow it point by point (sweep.* events), cancel it, and draw |Z|
// and θ, then ESR, D and Q, against frequency on log axes with uPlot — several saved
// sweeps overlaid, and the fitted model's curve (from /sweeps/{id}/fit) over the data.
import { api, on, si, showError, $, el } from './api.js';

const COLOURS = ['#1f6fb2', '#c0392b', '#2e8b57', '#8e44ad', '#b8860b', '#16a085'];
const DASHES = [[], [8, 4], [2, 3], [12, 3, 2, 3]];
const state = { current: null, overlays: new Set(), sweeps: new Map(), fit: null, plots: [], timer: null };

const positive = (a) => a.map((v) => (v === null || v === undefined || !(v > 0) ? null : v));

async function load(id) {
  const s = await api(`/sweeps/${id}`);
  state.sweeps.set(id, s);
  return s;
}

function showProgress(s) {
  const saved = s.points_saved || 0;
  const planned = s.points_planned || 0;
  $('sweep-progress').max = Math.max(planned, 1);
  $('sweep-progress').value = saved;
  const words = { running: 'measuring', complete: 'complete', cancelled: 'cancelled — the points taken are kept',
    failed: 'failed — the points taken are kept', interrupted: 'interrupted — the points taken are kept' };
  $('sweep-status').textContent = `Sweep ${s.id}${s.label ? ` “${s.label}”` : ''}: ${saved} of ${planned} points, ${words[s.status] || s.status}.`;
  $('sweep-status').dataset.status = s.status;
  $('sweep-cancel').disabled = s.status !== 'running';
  $('sweep-export').replaceChildren(
    el('a', { href: `/api/v1/sweeps/${s.id}/export?format=csv`, download: '', id: 'sweep-export-csv' }, `Download sweep ${s.id} as CSV`),
    el('a', { href: `/api/v1/sweeps/${s.id}/export?format=json`, download: '', id: 'sweep-export-json' }, `Download sweep ${s.id} as JSON`));
}

// The sweeps to draw: the current one first, then the ticked overlays.
function shown() {
  const ids = [];
  if (state.current !== null) ids.push(state.current);
  for (const id of state.overlays) if (id !== state.current && state.sweeps.has(id)) ids.push(id);
  return ids.map((id) => state.sweeps.get(id)).filter(Boolean);
}

// Log-axis labels at 1, 2 and 5 of each decade only: 20, 50, 100, 200, 500, 1k, 2k …
function logTick(t) {
  const m = t / 10 ** Math.floor(Math.log10(t) + 1e-9);
  if (![1, 2, 5].some((k) => Math.abs(m - k) < 1e-6)) return '';
  if (t >= 1e6) return `${+(t / 1e6).toPrecision(3)}M`;
  return t >= 1e3 ? `${+(t / 1e3).toPrecision(3)}k` : `${+t.toPrecision(3)}`;
}

function nearest(column, i) {
  for (let d = 0; d < column.length; ++d) {
    for (const j of [i - d, i + d]) {
      const v = column[j];
      if (v !== null && v !== undefined) return v;
    }
  }
  return null;
}

function build(target, tables, series, axes, scales) {
  const width = Math.max(260, target.clientWidth);
  const readout = target.nextElementSibling;
  const opts = {
    width, height: Math.round(Math.min(360, Math.max(220, width * 0.5))),
    scales: { x: { time: false, distr: 3, range: (u, min, max) => [min, max] }, ...scales },
    axes: [{ label: 'frequency, Hz', values: (u, ticks) => ticks.map(logTick) }, ...axes],
    series: [{ label: 'f' }, ...series],
    legend: { show: true },
    cursor: { drag: { x: false, y: false } },
    hooks: {
      setCursor: [(u) => {
        const i = u.cursor.idx;
        if (i === null || i === undefined) { readout.textContent = 'Move over the plot to read values.'; return; }
        const parts = [`${si(u.data[0][i], 'Hz')}`];
        u.series.forEach((s, k) => {
          if (k === 0 || !s.show) return;
          // Overlaid sweeps and the fitted curve have their own frequencies: each series
          // reads at its own point nearest the cursor.
          const v = nearest(u.data[k], i);
          if (v !== null && v !== undefined) parts.push(`${s.label}: ${Math.abs(v) < 1e-3 || Math.abs(v) >= 1e4 ? v.toExponential(3) : v.toPrecision(4)}`);
        });
        readout.textContent = parts.join(' · ');
      }],
    },
  };
  const data = tables.length === 1 ? tables[0] : window.uPlot.join(tables);
  target.replaceChildren();
  return new window.uPlot(opts, data, target);
}

function draw() {
  state.timer = null;
  if (!window.uPlot) {
    $('sweep-plots').replaceChildren(el('p', { class: 'error', role: 'alert', text: 'The plotting library did not load: run ./tbdev deps on the service machine, then reload.' }));
    return;
  }
  const list = shown();
  for (const p of state.plots) p.destroy();
  state.plots = [];
  const count = list.length ? list[0].columns.z_mag_ohm.filter((v) => v !== null).length : 0;
  $('sweep-impedance').dataset.points = count;
  if (!list.length) return;

  const zTables = [];
  const zSeries = [];
  const lTables = [];
  const lSeries = [];
  list.forEach((s, n) => {
    const c = s.columns;
    const stroke = COLOURS[n % COLOURS.length];
    const name = `#${s.id}`;
    zTables.push([c.freq_hz, positive(c.z_mag_ohm), c.theta_deg]);
    zSeries.push({ label: `|Z| ${name}, Ω`, scale: 'ohm', stroke, width: 2, spanGaps: true, points: { show: c.freq_hz.length < 60 } },
      { label: `θ ${name}, °`, scale: 'deg', stroke, width: 1.5, dash: [8, 4], spanGaps: true });
    lTables.push([c.freq_hz, positive(c.esr_ohm), positive(c.d), positive(c.q)]);
    lSeries.push({ label: `ESR ${name}, Ω`, scale: 'ohm', stroke, width: 2, spanGaps: true },
      { label: `D ${name}`, scale: 'ratio', stroke, width: 1.5, dash: DASHES[1], spanGaps: true },
      { label: `Q ${name}`, scale: 'ratio', stroke, width: 1.5, dash: DASHES[2], spanGaps: true });
  });
  if (state.fit && state.fit.sweep === list[0].id) {
    const c = state.fit.curve;
    zTables.push([c.freq_hz, positive(c.z_mag_ohm), c.theta_deg]);
    zSeries.push({ label: `|Z| fit ${state.fit.model}, Ω`, scale: 'ohm', stroke: '#777', width: 1, dash: [3, 3], spanGaps: true },
      { label: `θ fit ${state.fit.model}, °`, scale: 'deg', stroke: '#777', width: 1, dash: [1, 3], spanGaps: true });
  }
  const logY = { distr: 3 };
  state.plots.push(build($('sweep-impedance'), zTables, zSeries,
    [{ scale: 'ohm', label: '|Z|, Ω', values: (u, ticks) => ticks.map(logTick) }, { scale: 'deg', side: 1, label: 'θ, °', grid: { show: false } }],
    { ohm: logY, deg: { range: [-95, 95] } }));
  state.plots.push(build($('sweep-losses'), lTables, lSeries,
    [{ scale: 'ohm', label: 'ESR, Ω' }, { scale: 'ratio', side: 1, label: 'D, Q', grid: { show: false } }],
    { ohm: logY, ratio: logY }));
}
function redraw() {
  if (!state.timer) state.timer = setTimeout(draw, 200);
}

async function refresh(id) {
  try {
    const s = await load(id);
    if (id === state.current) showProgress(s);
    redraw();
  } catch (e) {
    showError($('sweep-error'), e);
  }
}

async function listSweeps() {
  const { sweeps } = await api('/sweeps?limit=20');
  $('sweep-list').replaceChildren(...sweeps.map((s) => {
    const box = el('input', { type: 'checkbox', id: `sweep-overlay-${s.id}`, checked: state.overlays.has(s.id) });
    box.addEventListener('change', async () => {
      if (box.checked) { state.overlays.add(s.id); await load(s.id); } else state.overlays.delete(s.id);
      redraw();
    });
    return el('li', {},
      el('label', { for: `sweep-overlay-${s.id}` }, box,
        ` Overlay #${s.id} ${s.label || ''} — ${si(s.params.start_hz, 'Hz')} to ${si(s.params.stop_hz, 'Hz')}, ${s.points_saved} points, ${s.status}`),
      el('button', { type: 'button', class: 'small', onclick: () => select(s.id) }, `Show #${s.id}`));
  }));
}

async function select(id) {
  state.current = id;
  state.fit = null;
  $('sweep-fit-result').textContent = '';
  await refresh(id);
}

async function start(e) {
  e.preventDefault();
  showError($('sweep-error'), null);
  const f = new FormData($('sweep-form'));
  const body = {
    start_hz: Number(f.get('start_hz')), stop_hz: Number(f.get('stop_hz')),
    points_per_decade: Number(f.get('points_per_decade')), method: f.get('method'),
  };
  if (f.get('duration_s')) body.duration_s = Number(f.get('duration_s'));
  if (f.get('label')) body.label = f.get('label');
  try {
    await api('/sweeps', { method: 'POST', body });
    $('sweep-status').textContent = 'Sweep queued: waiting for the engine to start it.';
  } catch (err) {
    showError($('sweep-error'), err);
  }
}

async function cancel() {
  if (state.current === null) return;
  try {
    await api(`/sweeps/${state.current}/cancel`, { method: 'POST', body: {} });
  } catch (err) {
    showError($('sweep-error'), err);
  }
}

async function fit() {
  if (state.current === null) return;
  showError($('sweep-error'), null);
  try {
    const r = await api(`/sweeps/${state.current}/fit`);
    state.fit = { sweep: state.current, model: r.model, curve: r.curve };
    $('sweep-fit-result').textContent = `Fitted ${r.model}: ` + r.params.map((p) => `${p.name} = ${si(p.value, p.unit === 'ohm' ? 'Ω' : p.unit)}`).join(', ') + (r.srf ? `; self-resonance ${si(r.srf.value ?? r.srf, 'Hz')}` : '');
    redraw();
  } catch (err) {
    showError($('sweep-error'), err);
  }
}

export function initSweep() {
  $('sweep-form').addEventListener('submit', start);
  $('sweep-cancel').addEventListener('click', cancel);
  $('sweep-fit').addEventListener('click', fit);
  on('sweep.begin', (d) => { select(d.sweep_id); listSweeps(); });
  on('sweep.point', (d) => { if (d.sweep_id === state.current) refresh(d.sweep_id); });
  on('sweep.replanned', (d) => { if (d.sweep_id === state.current) refresh(d.sweep_id); });
  on('sweep.end', (d) => { refresh(d.sweep_id); listSweeps(); });
  // Redraw on a width change only: the plots' own height would otherwise retrigger it.
  let lastWidth = 0;
  new ResizeObserver(([entry]) => {
    const w = Math.round(entry.contentRect.width);
    if (w !== lastWidth) { lastWidth = w; if (state.plots.length) redraw(); }
  }).observe($('sweep-plots'));
  listSweeps().then(() => api('/sweeps?limit=1')).then(({ sweeps }) => { if (sweeps.length && state.current === null) select(sweeps[0].id); })
    .catch((e) => showError($('sweep-error'), e));
}
