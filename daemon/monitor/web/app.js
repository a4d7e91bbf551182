// The monitor page's behaviour: the live feed over /api/v1/live (reconnects
// with a growing pause), current values, the extensometer alert with its
// confirm button, commands with the control token, arming a specimen with
// checks before sending, and the stored runs with their curves.
'use strict';

const $ = (id) => document.getElementById(id);
const fmt = (v, d) => (v == null || Number.isNaN(v) ? '-' : Number(v).toFixed(d));
const live = new Plots.Live($('plot-ss'), $('plot-ft'));
let retry = 500;

$('token').value = sessionStorage.getItem('tensiled-token') || '';
$('token').addEventListener('change', () => sessionStorage.setItem('tensiled-token', $('token').value.trim()));

function authHeaders() {
  const t = $('token').value.trim();
  return t ? { Authorization: 'Bearer ' + t } : {};
}

async function call(method, path, body) {
  const res = await fetch(path, { method, headers: { 'Content-Type': 'application/json', ...authHeaders() },
                                  body: body ? JSON.stringify(body) : undefined });
  const text = await res.text();
  let j = null;
  try { j = JSON.parse(text); } catch (e) { j = { error: text }; }
  if (!res.ok) throw new Error(j.error || res.statusText);
  return j;
}

function say(el, text, good) { el.textContent = text; el.className = 'msg ' + (good ? 'good' : 'bad'); }

function setState(state) {
  $('state').textContent = state;
  $('state').className = 'badge ' + state;
}

function showHandover(h, why) {
  $('v-handover').textContent = h.replace('_', ' ');
  $('alert').hidden = h !== 'waiting';
  if (why) $('alert-why').textContent = '(' + why + ')';
}

function showValues(v) {
  $('v-force').textContent = fmt(v.force_N / 1000, 3);
  $('v-ext').textContent = fmt(v.extension_mm, 4);
  $('v-xh').textContent = fmt(v.crosshead_mm, 3);
  if ('stress_MPa' in v) $('v-stress').textContent = fmt(v.stress_MPa, 1);
  if ('strain_pct' in v) $('v-strain').textContent = fmt(v.strain_pct, 3);
  if (v.strain_source) $('v-src').textContent = v.strain_source;
  if (v.rate_band_per_s) showRate(v.strain_rate_per_s, v.rate_band_per_s, v.rate_phase);
}

// The rate bar spans 0 to twice the band's top; the band is shaded.
function showRate(rate, band, phase) {
  const [lo, hi] = band;
  $('v-rate').textContent = rate == null ? '-' : (rate * 1000).toFixed(3) + ' ×10⁻³/s';
  $('v-band').textContent = hi > 0 ? `${phase}: ${(lo * 1000).toFixed(3)}–${(hi * 1000).toFixed(3)} ×10⁻³/s` : 'not checked';
  if (!(hi > 0)) return;
  const span = 2 * hi;
  $('rate-band').style.left = (100 * lo / span) + '%';
  $('rate-band').style.width = (100 * (hi - lo) / span) + '%';
  $('rate-mark').style.left = Math.min(100, 100 * (rate || 0) / span) + '%';
  document.querySelector('.rate').classList.toggle('out', rate != null && (rate < lo || rate > hi));
}

function addEventLine(text, cls) {
  const li = document.createElement('li');
  li.textContent = text;
  if (cls) li.className = cls;
  $('events').appendChild(li);
}

const eventText = (e) => `${e.label || e.kind} at ${fmt(e.time_s, 2)} s: ${fmt(e.stress_MPa, 1)} MPa, ${fmt(e.strain_pct, 3)} %`;

function onMessage(m) {
  switch (m.type) {
    case 'hello': {
      const s = m.status;
      $('rig').textContent = s.daemon.rig;
      setState(s.state);
      // Opened while the extensometer should come off: say why, from the alarm that asked.
      const ask = s.alarms.filter((a) => a.kind === 'extensometer_alert').pop();
      showHandover(s.handover, s.handover === 'waiting' && ask ? ask.message : '');
      showValues(s.values);
      $('v-run').textContent = s.run ? `${s.run.number} · ${s.run.label}` : '-';
      const sel = $('profiles');
      sel.innerHTML = '';
      for (const p of s.profiles) sel.add(new Option(p, p, p === s.default_profile, p === s.default_profile));
      if (s.run && s.run.id) backfill(s.run.id);
      break;
    }
    case 'state':
      setState(m.state);
      if (m.state === 'armed') {
        live.clear();
        $('events').innerHTML = '';
        $('v-run').textContent = `${m.run} · ${m.label}`;
      }
      addEventLine(`${m.state}: ${m.cause}`);
      break;
    case 'points': showValues(m); live.point(m); break;
    case 'idle': showValues(m); break;
    case 'event':
      live.event(m);
      addEventLine(eventText(m));
      break;
    case 'alarm':
      if (m.kind === 'extensometer_alert') showHandover('waiting', m.message);
      addEventLine(`alarm ${m.kind}: ${m.message}`, 'alarm');
      break;
    case 'handover': showHandover(m.handover); break;
    case 'run_end': {
      setState(m.state);
      const r = m.results || {};
      addEventLine(`run ${m.run} ${m.state}: Rm ${fmt(r.Rm_MPa, 1)} MPa, Rp0.2 ${fmt(r['Rp0.2_MPa'], 1)} MPa, A ${fmt(r.A_pct, 1)} %`);
      listRuns();
      break;
    }
  }
}

// A page opened mid-run draws what was stored so far, then follows live.
async function backfill(id) {
  try {
    const [run, frames] = await Promise.all([call('GET', `/api/v1/runs/${id}`), call('GET', `/api/v1/runs/${id}/frames?points=500`)]);
    live.clear();
    live.backfill(frames, run.events);
    $('events').innerHTML = '';
    for (const e of run.events) addEventLine(eventText(e));
  } catch (e) { /* the live feed still works */ }
}

function connect() {
  const t = $('token').value.trim();
  const ws = new WebSocket(`${location.protocol === 'https:' ? 'wss' : 'ws'}://${location.host}/api/v1/live` +
                           (t ? '?token=' + encodeURIComponent(t) : ''));
  ws.onopen = () => { retry = 500; $('link').textContent = 'feed: live'; };
  ws.onmessage = (e) => onMessage(JSON.parse(e.data));
  ws.onclose = () => {
    $('link').textContent = 'feed: lost, retrying';
    setTimeout(connect, retry);
    retry = Math.min(retry * 2, 10000);
  };
}

for (const [id, path, body] of [['btn-tare', '/api/v1/tare'], ['btn-start', '/api/v1/start'], ['btn-stop', '/api/v1/stop'],
                                ['btn-abort', '/api/v1/abort', { cause: 'aborted from the page' }],
                                ['confirm-handover', '/api/v1/handover/confirm']]) {
  $(id).addEventListener('click', async () => {
    try {
      const r = await call('POST', path, body);
      say($('cmd-msg'), r.command === 'tare' ? `tare: ${r.note}` : `done: ${r.state}`, true);
    }
    catch (e) { say($('cmd-msg'), e.message, false); }
  });
}

// Arming: the form shows the fields of the chosen section and checks them first.
const form = $('arm-form');
function showShapeFields() {
  const shape = form.shape.value;
  for (const l of form.querySelectorAll('label[data-for]')) l.hidden = !l.dataset.for.split(' ').includes(shape);
}
form.shape.addEventListener('change', showShapeFields);
showShapeFields();

function specimenFromForm() {
  const n = (name) => Number(form[name].value || 0);
  const s = { label: form.label.value.trim(), material: form.material.value.trim(), shape: form.shape.value,
              width_mm: n('width_mm'), thickness_mm: n('thickness_mm'), diameter_mm: n('diameter_mm'),
              wall_mm: n('wall_mm'), area_mm2: n('area_mm2'), gauge_length_mm: n('gauge_length_mm'),
              proportional_factor: n('proportional_factor') };
  const need = { rectangular: ['width_mm', 'thickness_mm'], round: ['diameter_mm'], tube: ['diameter_mm', 'wall_mm'], area: ['area_mm2'] };
  for (const k of need[s.shape]) if (!(s[k] > 0)) return { error: `${k.replace('_mm2', '').replace('_mm', '')} must be above zero` };
  if (s.shape === 'tube' && 2 * s.wall_mm >= s.diameter_mm) return { error: 'the wall must be less than half the diameter' };
  if (!(s.gauge_length_mm > 0) && !(s.proportional_factor > 0)) return { error: 'give the gauge length L0 or a proportional k' };
  if (!s.label) return { error: 'give the specimen a label' };
  return { specimen: s };
}

form.addEventListener('submit', async (ev) => {
  ev.preventDefault();
  const s = specimenFromForm();
  if (s.error) return say($('arm-msg'), s.error, false);
  try {
    const r = await call('POST', '/api/v1/arm', { specimen: s.specimen, profile: form.profile.value });
    say($('arm-msg'), `armed: run ${r.run} (stored id ${r.run_id})`, true);
  } catch (e) { say($('arm-msg'), e.message, false); }
});

// Stored runs.
async function listRuns() {
  const f = $('filter');
  const q = new URLSearchParams();
  for (const k of ['material', 'state', 'from', 'to']) if (f[k].value) q.set(k, f[k].value);
  q.set('limit', '50');
  try {
    const r = await call('GET', '/api/v1/runs?' + q);
    const body = $('runs');
    body.innerHTML = '';
    for (const run of r.runs) {
      const tr = body.insertRow();
      for (const v of [run.id, new Date(run.created_unix_s * 1000).toLocaleString(), run.state, run.material])
        tr.insertCell().textContent = v;
      tr.addEventListener('click', () => showRun(run.id));
    }
  } catch (e) { $('runs').innerHTML = `<tr><td colspan="4">${e.message}</td></tr>`; }
}
$('filter').addEventListener('submit', (ev) => { ev.preventDefault(); listRuns(); });

async function showRun(id) {
  const [run, frames] = await Promise.all([call('GET', `/api/v1/runs/${id}`), call('GET', `/api/v1/runs/${id}/frames?points=800`)]);
  $('run-detail').hidden = false;
  $('run-title').textContent = `Run ${id}: ${run.specimen ? run.specimen.label : ''} — ${run.state}`;
  $('export-csv').href = `/api/v1/runs/${id}/export?format=csv`;
  $('export-json').href = `/api/v1/runs/${id}/export?format=json`;
  Plots.past($('plot-past'), frames, run.events);
  const body = $('run-results');
  body.innerHTML = '';
  const r = run.results || {};
  for (const [k, v] of Object.entries(r)) {
    if (typeof v !== 'number') continue;
    const tr = body.insertRow();
    tr.insertCell().textContent = k;
    tr.insertCell().textContent = fmt(v, 4);
  }
  for (const w of r.warnings || []) body.insertRow().insertCell().textContent = 'note: ' + w;
  const rc = run.strain_rate_compliance || {};
  for (const [phase, c] of Object.entries(rc))
    body.insertRow().insertCell().textContent = `strain rate, ${phase}: ${fmt(100 * (c.share_inside || 0), 0)} % of ${fmt(c.seconds_checked, 1)} s inside the band`;
}

connect();
listRuns();
