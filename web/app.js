// The page's start: the safety notice, the view tabs, the engine state line, and each
// view's module. The service does the maths; these modules only ask and draw.
import { api, on, connectEvents, $ } from './api.js';
import { initLive, showEngineState } from './live.js';
import { initSweep } from './sweep.js';
import { initJobs } from './jobs.js';
import { initCalibrate } from './calibrate.js';
import { initSettings } from './settings.js';

const SAFETY_KEY = 'tonebridge.safety-acknowledged';

function safety() {
  const dialog = $('safety');
  if (localStorage.getItem(SAFETY_KEY)) return;
  dialog.addEventListener('cancel', (e) => e.preventDefault());  // Escape does not skip it
  $('safety-ok').addEventListener('click', () => localStorage.setItem(SAFETY_KEY, new Date().toISOString()));
  dialog.showModal();
}

function tabs() {
  const list = [...document.querySelectorAll('[role=tab]')];
  const select = (tab) => {
    for (const t of list) {
      const on = t === tab;
      t.setAttribute('aria-selected', on ? 'true' : 'false');
      t.tabIndex = on ? 0 : -1;
      $(t.getAttribute('aria-controls')).hidden = !on;
    }
    history.replaceState(null, '', `#${tab.id.slice(4)}`);
    window.dispatchEvent(new Event('resize'));
  };
  for (const t of list) {
    t.addEventListener('click', () => select(t));
    t.addEventListener('keydown', (e) => {
      const i = list.indexOf(t);
      const to = { ArrowRight: i + 1, ArrowLeft: i - 1, Home: 0, End: list.length - 1 }[e.key];
      if (to === undefined) return;
      e.preventDefault();
      const next = list[(to + list.length) % list.length];
      next.focus();
      select(next);
    });
  }
  const start = $(`tab-${location.hash.slice(1)}`);
  if (start) select(start);
}

const WORDS = { idle: 'Ready', reading: 'Taking a reading', watching: 'Reading continuously', sweeping: 'Sweeping',
  calibrating: 'Calibrating', 'device-lost': 'Sound card lost: check the cable, then restart the service', stopping: 'Service stopping' };
function showState(s) {
  $('state').textContent = `${WORDS[s.state] || s.state}${s.device === 'simulated' ? ' · simulated bench' : ` · ${s.device}`}`;
  $('state').dataset.state = s.state;
  showEngineState(s);
}

safety();
tabs();
on('hello', showState);
on('state', showState);
initLive();
initSweep();
initJobs();
initCalibrate();
initSettings();
connectEvents(() => { $('state').textContent = 'Connection to the service lost: retrying…'; });
api('/status').then((s) => showState(s.engine)).catch(() => {});
