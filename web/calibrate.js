// The calibration guide: every step the service lists for the present set-up, with its
// drawing, what to connect and why, how it stands, and a button that takes it.
import { api, on, si, showError, $, el } from './api.js';

const STATUS = {
  current: ['✔', 'done and current'], missing: ['○', 'not taken yet'],
  partial: ['◐', 'taken, but does not span the frequencies'], stale: ['⌛', 'taken, but old: take it again'],
};

function extraFields(kind) {
  if (kind === 'load') {
    return [
      el('label', {}, 'Resistor value, Ω ', el('input', { name: 'load_ohm', inputmode: 'decimal', required: true, value: '100' })),
      el('label', {}, 'Its tolerance, % ', el('input', { name: 'load_tolerance_pct', inputmode: 'decimal', value: '0.1' })),
    ];
  }
  if (kind === 'level') {
    return [
      el('button', { type: 'button', onclick: tone }, 'Play the test tone for 60 s'),
      el('label', {}, 'Your meter’s AC reading at node A, V rms ', el('input', { name: 'meter_vrms', inputmode: 'decimal', required: true })),
    ];
  }
  return [];
}

async function tone() {
  try {
    await api('/tone', { method: 'POST', body: { seconds: 60 } });
    $('cal-result').textContent = 'The test tone plays for 60 s: read node A with your AC meter now.';
  } catch (e) {
    showError($('cal-error'), e);
  }
}

async function take(kind, form, button) {
  showError($('cal-error'), null);
  const body = { kind, wait: true };
  for (const [k, v] of new FormData(form)) if (v !== '') body[k] = Number(v);
  button.setAttribute('aria-busy', 'true');
  button.disabled = true;
  $('cal-result').textContent = `Taking the ${kind.replace('_', ' ')} step…`;
  try {
    const c = await api('/calibrations', { method: 'POST', body });
    $('cal-result').textContent = `Saved calibration ${c.id} (${kind.replace('_', ' ')}) at ${c.points ? c.points.length : 1} frequencies.`;
  } catch (e) {
    $('cal-result').textContent = '';
    showError($('cal-error'), e);
  } finally {
    button.removeAttribute('aria-busy');
    button.disabled = false;
    load();
  }
}

async function load() {
  try {
    const g = await api('/calibrations/guide');
    const s = g.setup;
    $('cal-setup').textContent = `For ${s.device}, ${si(s.sample_rate_hz, 'Hz')}, ${s.layout}, Rref ${si(s.rref_ohm, 'Ω')}. Change the set-up under Settings; each set-up keeps its own calibrations.`;
    const required = g.steps.filter((st) => !st.optional);
    const done = required.filter((st) => st.status === 'current').length;
    $('cal-progress').max = required.length;
    $('cal-progress').value = done;
    $('cal-progress-text').textContent = g.next
      ? `${done} of ${required.length} required steps are current. Next: ${g.steps.find((st) => st.kind === g.next).title}.`
      : `All ${required.length} required steps are current.`;
    $('cal-steps').replaceChildren(...g.steps.map((st, i) => {
      const [icon, words] = STATUS[st.status] || ['•', st.status];
      const form = el('form', { class: 'cal-form' }, ...extraFields(st.kind));
      const button = el('button', { type: 'submit' }, `Take step ${i + 1}: ${st.title}`);
      form.append(button);
      form.addEventListener('submit', (e) => { e.preventDefault(); take(st.kind, form, button); });
      return el('li', { class: `cal-step ${st.status}${g.next === st.kind ? ' next' : ''}` },
        el('img', { src: st.drawing, alt: `Drawing of the jig for the ${st.title.toLowerCase()} step`, width: 220 }),
        el('div', {},
          el('h3', { text: `${i + 1}. ${st.title}${st.optional ? ' (optional)' : ''}` }),
          el('p', { class: 'cal-status' }, el('span', { 'aria-hidden': 'true', text: `${icon} ` }), `Status: ${words}${st.taken_at ? `, taken ${st.taken_at.slice(0, 16).replace('T', ' ')}` : ''}`),
          el('p', {}, el('strong', { text: 'Connect: ' }), st.connect),
          el('p', { class: 'note' }, el('strong', { text: 'Why: ' }), st.why),
          form));
    }));
  } catch (e) {
    showError($('cal-error'), e);
  }
}

export function initCalibrate() {
  on('calibration', load);
  on('settings', load);
  load();
}
