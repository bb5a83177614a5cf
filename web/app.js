// The first page of tonebridge: the latest reading, live. The service does the maths;
// this file only asks for readings and shows what comes back.
const api = (path, options = {}) =>
  fetch(`/api/v1${path}`, { headers: { 'Content-Type': 'application/json' }, ...options })
    .then(async (r) => {
      const body = r.status === 204 ? null : await r.json();
      if (!r.ok) throw new Error(`${body.error.message}. ${body.error.hint}`);
      return body;
    });

const $ = (id) => document.getElementById(id);

// Engineering notation with the digits the uncertainty supports.
function si(value, unit, u) {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  const prefixes = [[1e9, 'G'], [1e6, 'M'], [1e3, 'k'], [1, ''], [1e-3, 'm'], [1e-6, 'µ'], [1e-9, 'n'], [1e-12, 'p']];
  const [scale, p] = prefixes.find(([s]) => Math.abs(value) >= s) || prefixes[prefixes.length - 1];
  let digits = 4;
  if (u > 0) digits = Math.max(2, Math.min(6, Math.ceil(Math.log10(Math.abs(value) / u)) + 1));
  return `${(value / scale).toPrecision(digits)} ${p}${unit}`;
}

function show(r) {
  const u = r.uncertainty || {};
  let main;
  if (r.kind === 'C') main = `${si(r.cs_f, 'F', u.cs_f)}  ESR ${si(r.esr_ohm, 'Ω', u.z_real_ohm)}`;
  else if (r.kind === 'L') main = `${si(r.ls_h, 'H', u.ls_h)}  R ${si(r.rs_ohm, 'Ω', u.z_real_ohm)}`;
  else main = si(r.z_mag_ohm, 'Ω', u.z_mag_ohm);
  $('value').textContent = main;
  $('secondary').textContent =
    `|Z| ${si(r.z_mag_ohm, 'Ω', u.z_mag_ohm)} ± ${si(u.z_mag_ohm, 'Ω')}   θ ${r.theta_deg.toFixed(3)}°   D ${r.d === null ? '—' : r.d.toPrecision(3)}`;
  const level = r.test_voltage_vrms ? `, ${si(r.test_voltage_vrms, 'V')} rms at the part` : '';
  $('conditions').textContent =
    `${si(r.freq_hz, 'Hz')}${level}; ${r.layout}, Rref ${si(r.rref_ohm, 'Ω')}` +
    (r.advice && r.advice.change ? `. Advice: ${r.advice.text}` : '');
  $('warnings').replaceChildren(...(r.warnings || []).map((w) => {
    const li = document.createElement('li');
    li.textContent = w.hint ? `${w.message}: ${w.hint}` : w.message;
    return li;
  }));
}

function showState(s) {
  $('state').textContent = `${s.state}${s.device === 'simulated' ? ' · simulated bench' : ''}`;
  if (s.bench_part) $('bench').textContent = `Simulated part: ${s.bench_part}`;
  $('watch').setAttribute('aria-pressed', s.state === 'watching' ? 'true' : 'false');
}

async function take() {
  $('error').textContent = '';
  try {
    show(await api('/readings', { method: 'POST', body: JSON.stringify({ wait: true }) }));
  } catch (e) {
    $('error').textContent = e.message;
  }
}

async function toggleWatch() {
  $('error').textContent = '';
  const on = $('watch').getAttribute('aria-pressed') === 'true';
  try {
    if (on) await api('/watch', { method: 'DELETE' });
    else await api('/watch', { method: 'POST', body: JSON.stringify({ per_s: 2 }) });
  } catch (e) {
    $('error').textContent = e.message;
  }
}

if (!localStorage.getItem('tonebridge.safety-read')) {
  $('safety').showModal();
  $('safety-ok').addEventListener('click', () => localStorage.setItem('tonebridge.safety-read', '1'));
}
$('take').addEventListener('click', take);
$('watch').addEventListener('click', toggleWatch);

// On the LAN the service turned the URL's token into a cookie, which every request sends.
const events = new EventSource('/api/v1/events');
events.addEventListener('hello', (e) => showState(JSON.parse(e.data)));
events.addEventListener('state', (e) => showState(JSON.parse(e.data)));
events.addEventListener('reading', (e) => show(JSON.parse(e.data)));
events.addEventListener('reading.error', (e) => {
  const { error } = JSON.parse(e.data);
  $('error').textContent = `${error.message}. ${error.hint}`;
});
events.onerror = () => { $('state').textContent = 'connection lost — retrying…'; };
api('/readings/latest').then(show).catch(() => {});
