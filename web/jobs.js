// Repair jobs and their parts: choose the part a captured reading is filed under (and
// step to the next designator after each capture), see what is filed under a part,
// judge a reading against its marking, sort a bag of readings into matched pairs, and
// open the printable job report.
import { api, on, si, showError, $, el } from './api.js';
import { setCaptureTarget } from './live.js';

const state = { job: null, parts: [], part: null, ticked: new Set() };
const OUTCOME = { pass: ['✔', 'Pass'], fail: ['✖', 'Fail'], inconclusive: ['?', 'Inconclusive'] };

function verdictBadge(outcome) {
  const [icon, word] = OUTCOME[outcome] || ['•', outcome];
  return el('span', { class: `verdict ${outcome}` }, el('span', { 'aria-hidden': 'true', text: `${icon} ` }), word);
}

async function listJobs(selectId) {
  const { jobs } = await api('/jobs');
  const select = $('jobs-select');
  select.replaceChildren(el('option', { value: '', text: jobs.length ? 'Choose a job…' : 'No jobs yet: open one below' }),
    ...jobs.map((j) => el('option', { value: j.id, text: `${j.serial || `job ${j.id}`} — ${[j.make, j.model].filter(Boolean).join(' ')}` })));
  const want = selectId ?? state.job?.id;
  if (want) { select.value = String(want); await openJob(want); }
}

async function openJob(id) {
  showError($('jobs-error'), null);
  if (!id) { state.job = null; state.parts = []; renderParts(); return; }
  const job = await api(`/jobs/${id}`);
  state.job = job;
  state.parts = [...job.parts].sort((a, b) => a.designator.localeCompare(b.designator, undefined, { numeric: true }));
  $('jobs-report').replaceChildren(
    el('a', { href: `/api/v1/jobs/${id}/report?format=html`, target: '_blank', rel: 'noopener', id: 'jobs-report-html' }, 'Open the printable job report'),
    el('a', { href: `/api/v1/jobs/${id}/report?format=csv`, download: '' }, 'Download the job as CSV'));
  $('jobs-notes').textContent = job.notes || '';
  if (state.part && !state.parts.some((p) => p.id === state.part.id)) state.part = null;
  if (!state.part && state.parts.length) state.part = state.parts[0];
  renderParts();
  announceTarget();
  if (state.part) showPart(state.part.id);
}

function renderParts() {
  $('jobs-parts').replaceChildren(...state.parts.map((p) => {
    const radio = el('input', { type: 'radio', name: 'capture-part', id: `part-${p.id}`, value: p.id, checked: state.part?.id === p.id });
    radio.addEventListener('change', () => choosePart(p));
    return el('tr', { class: state.part?.id === p.id ? 'chosen' : null },
      el('td', {}, radio),
      el('td', {}, el('label', { for: `part-${p.id}`, text: p.designator })),
      el('td', { text: p.marking || '—' }),
      el('td', { text: p.notes || '' }));
  }));
  $('jobs-empty').hidden = state.parts.length > 0 || !state.job;
}

function choosePart(p) {
  state.part = p;
  renderParts();
  announceTarget();
  showPart(p.id);
}

function nextPart() {
  const i = state.parts.findIndex((p) => p.id === state.part?.id);
  if (state.part) showPart(state.part.id);
  if (i >= 0 && i + 1 < state.parts.length) choosePart(state.parts[i + 1]);
  else $('jobs-status').textContent = 'That was the last part of the job.';
}

function announceTarget() {
  setCaptureTarget(state.part ? { part: state.part, role: $('jobs-role').value, next: nextPart } : null);
}

async function showPart(id) {
  const p = await api(`/parts/${id}`);
  const rows = [];
  for (const role of ['original', 'replacement']) {
    for (const r of p.readings[role] || []) {
      const box = el('input', { type: 'checkbox', 'aria-label': `Tick reading ${r.id} for pair sorting`, checked: state.ticked.has(r.id) });
      box.addEventListener('change', () => { if (box.checked) state.ticked.add(r.id); else state.ticked.delete(r.id); });
      const verdict = el('span', { class: 'verdict-slot' });
      rows.push(el('tr', {},
        el('td', {}, box),
        el('td', { text: `#${r.id}` }),
        el('td', { text: role }),
        el('td', { text: `${si(r.value, r.unit === 'ohm' ? 'Ω' : r.unit)} at ${si(r.freq_hz, 'Hz')}` }),
        el('td', { text: r.d === null ? '—' : r.d.toPrecision(3) }),
        el('td', {}, el('button', { type: 'button', class: 'small', onclick: () => judge(r.id, verdict) }, 'Check against the marking'), verdict)));
    }
  }
  $('part-title').textContent = `${p.designator}${p.marking ? ` — marked “${p.marking}”` : ' — no marking entered'}`;
  $('part-readings').replaceChildren(...rows);
  $('part-none').hidden = rows.length > 0;
  showVerdicts(p.verdicts || []);
}

function showVerdicts(verdicts) {
  $('part-verdicts').replaceChildren(...verdicts.map((v) =>
    el('li', {}, verdictBadge(v.outcome), ` ${v.kind}, ${v.role}: ${v.text}`)));
}

async function judge(readingId, slot) {
  showError($('jobs-error'), null);
  try {
    const v = await api('/checks/tolerance', { method: 'POST', body: { reading_id: readingId } });
    slot.replaceChildren(verdictBadge(v.outcome), ` ${v.text}`);
    if (v.part_id) showVerdicts((await api(`/parts/${v.part_id}/verdicts`)).verdicts);
  } catch (e) {
    showError($('jobs-error'), e);
  }
}

async function pairs() {
  showError($('jobs-error'), null);
  try {
    const r = await api('/checks/pairs', { method: 'POST', body: { reading_ids: [...state.ticked] } });
    $('jobs-pairs').replaceChildren(...r.pairs.map((p) =>
      el('li', { text: `readings #${p.reading_ids[0]} and #${p.reading_ids[1]}: spread ${p.spread.spread_pct.toFixed(3)} % ± ${p.spread.expanded_pct.toFixed(3)} %` })),
    ...(r.left_out_id ? [el('li', { text: `#${r.left_out_id} is the spare` })] : []));
  } catch (e) {
    showError($('jobs-error'), e);
  }
}

async function newJob(e) {
  e.preventDefault();
  showError($('jobs-error'), null);
  const f = Object.fromEntries(new FormData($('jobs-new')));
  try {
    const job = await api('/jobs', { method: 'POST', body: f });
    $('jobs-new').reset();
    await listJobs(job.id);
  } catch (err) {
    showError($('jobs-error'), err);
  }
}

async function newPart(e) {
  e.preventDefault();
  showError($('jobs-error'), null);
  if (!state.job) { showError($('jobs-error'), new Error('Choose or open a job first')); return; }
  const f = Object.fromEntries(new FormData($('parts-new')));
  try {
    const part = await api(`/jobs/${state.job.id}/parts`, { method: 'POST', body: f });
    $('parts-new').reset();
    state.part = part;
    await openJob(state.job.id);
    $('parts-new').elements.designator.focus();
  } catch (err) {
    showError($('jobs-error'), err);
  }
}

export function initJobs() {
  $('jobs-select').addEventListener('change', (e) => openJob(e.target.value).catch((err) => showError($('jobs-error'), err)));
  $('jobs-role').addEventListener('change', announceTarget);
  $('jobs-new').addEventListener('submit', newJob);
  $('parts-new').addEventListener('submit', newPart);
  $('jobs-pairs-run').addEventListener('click', pairs);
  on('job', () => listJobs().catch(() => {}));
  listJobs().catch((e) => showError($('jobs-error'), e));
}
