// The live reading: one large primary value rounded to its uncertainty, the model it comes
// from, the secondary values, the conditions, advice and warnings; single or continuous
// readings, hold-when-stable, and capture into the chosen part (jobs.js) by a key.
import { api, on, quantity, plain, si, showError, $, el } from './api.js';

const state = { latest: null, model: 'series', held: false, recent: [], capture: null };

// The primary quantity by part type and model: [field, unit, name].
const PRIMARY = {
  series: { C: ['cs_f', 'F', 'Cs'], L: ['ls_h', 'H', 'Ls'], R: ['rs_ohm', 'Ω', 'Rs'] },
  parallel: { C: ['cp_f', 'F', 'Cp'], L: ['lp_h', 'H', 'Lp'], R: ['rp_ohm', 'Ω', 'Rp'] },
};
const U_FIELD = { rs_ohm: 'z_real_ohm' };

function primaryOf(r, model = state.model) {
  const [field, unit, name] = (PRIMARY[model][r.kind] || PRIMARY[model].R);
  const u = (r.uncertainty || {})[U_FIELD[field] || field];
  return { field, unit, name, value: r[field], u };
}

function show(r) {
  state.latest = r;
  const p = primaryOf(r);
  const q = quantity(p.value, p.unit, p.u);
  $('live-name').textContent = p.name;
  $('live-number').textContent = q.number;
  $('live-unit').textContent = q.unit;
  $('live-u').textContent = q.u ? `${q.u} (k = ${(r.uncertainty.k || 2).toFixed(1)})` : 'no uncertainty stated';
  $('live-model').textContent = state.model === 'series'
    ? 'series model (Rs in series with the reactance)'
    : 'parallel model (Rp across the reactance)';
  const u = r.uncertainty || {};
  const esr = quantity(r.esr_ohm, 'Ω', u.z_real_ohm);
  const sec = [
    ['|Z|', quantity(r.z_mag_ohm, 'Ω', u.z_mag_ohm).text],
    ['θ', `${plain(r.theta_deg, u.theta_deg)}°`],
    ['ESR', r.esr_below_resolution ? `below resolution (< ${esr.u.replace('± ', '')})` : esr.text],
    ['D', plain(r.d, u.d)],
    ['Q', plain(r.q, u.q)],
  ];
  $('live-secondary').replaceChildren(...sec.map(([k, v]) => el('div', {}, el('dt', { text: k }), el('dd', { text: v }))));
  const level = r.test_voltage_vrms ? `${si(r.test_voltage_vrms, 'V')} rms across the part` : `output ${(r.output_level_fs * 100).toFixed(0)} % of full scale (volts unknown: take the level calibration)`;
  $('live-freq').textContent = si(r.freq_hz, 'Hz');
  $('live-level').textContent = level;
  $('live-setup').textContent = `${r.layout === 'part-high' ? 'part high' : 'part low'}, Rref ${si(r.rref_ohm, 'Ω')}`;
  $('live-kind').textContent = `${{ C: 'capacitor', L: 'inductor', R: 'resistor' }[r.kind] || r.kind}${r.kind_forced ? ' (forced)' : ' (detected)'}`;
  const advice = r.advice && r.advice.change
    ? `Better: ${r.advice.text || `switch to Rref ${si(r.advice.rref_ohm, 'Ω')}, ${r.advice.layout} (±${r.advice.u_advised_pct.toFixed(2)} % instead of ±${r.advice.u_now_pct.toFixed(2)} %)`}.`
    : 'The jig set-up suits this part.';
  $('live-advice').textContent = advice;
  const warnings = r.warnings || [];
  $('live-warnings').replaceChildren(...warnings.map((w) =>
    el('li', {}, el('span', { class: 'icon', 'aria-hidden': 'true', text: '⚠' }), el('strong', { text: 'Warning: ' }),
      `${w.message}${w.hint ? ` — ${w.hint}` : ''}`)));
  $('live-reading').dataset.readingId = r.id;
  $('live-capture').disabled = !state.capture || !state.capture.part;
  holdCheck(r);
}

// Hold: three readings in a row whose primary values agree within their U freeze the
// display, so the value can be read while the probes are lifted.
function holdCheck(r) {
  if (!$('live-hold').checked) { setHeld(false); return; }
  const p = primaryOf(r);
  state.recent.push(p);
  if (state.recent.length > 3) state.recent.shift();
  const values = state.recent.map((x) => x.value);
  const spread = Math.max(...values) - Math.min(...values);
  const u = Math.max(...state.recent.map((x) => x.u || 0));
  const stable = state.recent.length === 3 && u > 0 && spread <= u;
  if (stable && !state.held) {
    setHeld(true);
    if ($('live-beep').checked) beep();
  }
}
function setHeld(held) {
  state.held = held;
  if (!held) state.recent = [];
  $('live-held').hidden = !held;
  $('live-reading').classList.toggle('held', held);
}
function beep() {
  const ctx = new AudioContext();
  const o = ctx.createOscillator();
  const g = ctx.createGain();
  o.frequency.value = 1760;
  g.gain.value = 0.1;
  o.connect(g).connect(ctx.destination);
  o.start();
  o.stop(ctx.currentTime + 0.12);
}

function request() {
  const body = {};
  const kind = $('live-force').value;
  if (kind) body.kind = kind;
  const cls = $('live-class').value;
  if (cls !== 'general') body.part_class = cls;
  return body;
}

async function take() {
  showError($('live-error'), null);
  setHeld(false);
  $('live-take').setAttribute('aria-busy', 'true');
  try {
    show(await api('/readings', { method: 'POST', body: { ...request(), wait: true } }));
    // The shown value has the focus, so Space / Enter (or a foot switch) captures it.
    $('live-reading').focus();
  } catch (e) {
    showError($('live-error'), e);
  } finally {
    $('live-take').removeAttribute('aria-busy');
  }
}

async function toggleWatch() {
  showError($('live-error'), null);
  const on = $('live-watch').getAttribute('aria-pressed') === 'true';
  try {
    if (on) await api('/watch', { method: 'DELETE' });
    else {
      setHeld(false);
      await api('/watch', { method: 'POST', body: { ...request(), per_s: 2 } });
      $('live-reading').focus();
    }
  } catch (e) {
    showError($('live-error'), e);
  }
}

/** Files the shown reading under the chosen part; jobs.js then moves to the next one. */
async function capture() {
  const r = state.latest;
  const c = state.capture;
  if (!r || !c || !c.part) {
    showError($('live-error'), new Error('Choose a part first: open Jobs and pick the part to capture into'));
    return;
  }
  try {
    await api(`/readings/${r.id}`, { method: 'PUT', body: { part_id: c.part.id, role: c.role } });
    $('live-captured').textContent = `Reading ${r.id} filed under ${c.part.designator} (${c.role}).`;
    setHeld(false);
    c.next();
  } catch (e) {
    showError($('live-error'), e);
  }
}

/** jobs.js says which part a capture goes to: {part, role, next()} or null. */
export function setCaptureTarget(target) {
  state.capture = target;
  $('live-target').textContent = target && target.part
    ? `${target.part.designator}${target.part.marking ? ` (${target.part.marking})` : ''}, ${target.role}`
    : 'none — pick a part under Jobs';
  $('live-capture').disabled = !target || !target.part || !state.latest;
}

export function showEngineState(s) {
  $('live-watch').setAttribute('aria-pressed', s.state === 'watching' ? 'true' : 'false');
  $('live-watch').textContent = s.state === 'watching' ? 'Stop continuous readings' : 'Read continuously';
  if (s.bench_part) $('live-bench').textContent = `Simulated part on the jig: ${s.bench_part}`;
}

export function initLive() {
  $('live-take').addEventListener('click', take);
  $('live-watch').addEventListener('click', toggleWatch);
  $('live-capture').addEventListener('click', capture);
  $('live-hold').addEventListener('change', () => setHeld(false));
  $('live-release').addEventListener('click', () => setHeld(false));
  $('live-model-toggle').addEventListener('click', () => {
    state.model = state.model === 'series' ? 'parallel' : 'series';
    $('live-model-toggle').textContent = state.model === 'series' ? 'Show parallel model' : 'Show series model';
    if (state.latest) show(state.latest);
  });
  // A USB foot switch types Space or Enter: capture, unless the key belongs to a control.
  document.addEventListener('keydown', (e) => {
    if (e.key !== ' ' && e.key !== 'Enter') return;
    if ($('view-live').hidden) return;
    const t = e.target;
    if (t.closest && t.closest('button, input, select, textarea, a, dialog, [role=tab]')) return;
    e.preventDefault();
    capture();
  });
  on('reading', (r) => { if (!state.held) show(r); });
  on('reading.error', ({ error }) => showError($('live-error'), new Error(`${error.message}. ${error.hint}`)));
  api('/readings/latest').then(show).catch(() => {});
}
