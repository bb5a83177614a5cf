// Settings: a form built from the table GET /api/v1/settings returns (name, type, bounds,
// unit, description, live). Live settings change at once (PUT, all or nothing); the others
// are shown with how to change them.
import { api, on, showError, $, el } from './api.js';

// The bench's own settings first; the rest folds away.
const MAIN = ['device', 'sample_rate_hz', 'layout', 'rref_ohm', 'rref_set_ohm', 'freq_hz', 'level_fs', 'mains_hz', 'sim_part'];
let shownValues = {};

function text(v) {
  return Array.isArray(v) ? v.join(', ') : String(v);
}

function field(row, value) {
  const id = `set-${row.name}`;
  let input;
  if (row.type === 'choice') {
    input = el('select', { id, name: row.name }, ...row.choices.map((c) => el('option', { value: c, text: `${c}${row.unit ? ` ${row.unit}` : ''}`, selected: String(c) === String(value) })));
  } else if (row.type === 'boolean') {
    input = el('input', { id, name: row.name, type: 'checkbox', checked: value === true });
  } else {
    input = el('input', { id, name: row.name, value: text(value), inputmode: row.type === 'text' ? 'text' : 'decimal', autocomplete: 'off' });
  }
  if (!row.live) input.disabled = true;
  const bounds = row.min !== undefined ? ` (${row.min} to ${row.max}${row.unit ? ` ${row.unit}` : ''})` : '';
  return el('div', { class: 'setting' },
    el('label', { for: id }, el('strong', { text: row.name.replaceAll('_', ' ') }), row.unit && row.type !== 'choice' ? `, ${row.unit}` : ''),
    input,
    el('p', { class: 'note', id: `${id}-about` }, `${row.description}${bounds}.${row.live ? '' : ' Changes in the config file or as a flag, then restart the service.'}`));
}

async function load() {
  try {
    const { values, schema } = await api('/settings');
    shownValues = values;
    const main = schema.filter((r) => MAIN.includes(r.name)).sort((a, b) => MAIN.indexOf(a.name) - MAIN.indexOf(b.name));
    const rest = schema.filter((r) => !MAIN.includes(r.name));
    $('settings-main').replaceChildren(...main.map((r) => field(r, values[r.name])));
    $('settings-more').replaceChildren(...rest.map((r) => field(r, values[r.name])));
    for (const input of document.querySelectorAll('#settings-form [id^=set-]')) {
      if (input.tagName !== 'P') input.setAttribute('aria-describedby', `${input.id}-about`);
    }
  } catch (e) {
    showError($('settings-error'), e);
  }
}

async function save(e) {
  e.preventDefault();
  showError($('settings-error'), null);
  const changes = {};
  for (const input of $('settings-form').querySelectorAll('input, select')) {
    if (input.disabled || !input.name) continue;
    const was = shownValues[input.name];
    const now = input.type === 'checkbox' ? input.checked : input.value.trim();
    if (input.type === 'checkbox' ? now !== was : now !== text(was)) changes[input.name] = now;
  }
  if (!Object.keys(changes).length) { $('settings-result').textContent = 'Nothing changed.'; return; }
  try {
    await api('/settings', { method: 'PUT', body: changes });
    $('settings-result').textContent = `Saved: ${Object.keys(changes).join(', ')}. They last until the service restarts.`;
    await load();
  } catch (err) {
    showError($('settings-error'), err);
  }
}

export function initSettings() {
  $('settings-form').addEventListener('submit', save);
  $('settings-reload').addEventListener('click', load);
  on('settings', () => { if (!$('settings-form').contains(document.activeElement)) load(); });
  load();
}
