// The workspace page: plain JavaScript over the JSON API, no framework and no build step.
// Every piece of text from a spreadsheet goes into the page as text (textContent or a text
// node), never as markup.
'use strict';

const page = {
  files: null, results: null, columns: null, overrides: null, outputs: null,
  roster: null, corrections: null,
  selected: null, sort: { key: 'row', up: true }, filter: 'all', search: '',
  shown: -1, version: null, grading: false,
  // each sheet panel's open state as the assistant left it, by file and sheet
  openSheets: new Map(),
};

// ---- small helpers ----

function $(id) { return document.getElementById(id); }

// An element with attributes and children; strings become text nodes.
function el(tag, attrs, ...kids) {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs || {})) {
    if (v === null || v === undefined || v === false) continue;
    if (k === 'class') e.className = v;
    else if (k === 'text') e.textContent = v;
    else if (k.startsWith('on')) e.addEventListener(k.slice(2), v);
    else e.setAttribute(k, v === true ? '' : String(v));
  }
  for (const k of kids.flat(Infinity)) {
    if (k === null || k === undefined || k === false) continue;
    e.append(typeof k === 'string' || typeof k === 'number' ? document.createTextNode(String(k)) : k);
  }
  return e;
}

function clear(node) { while (node.firstChild) node.removeChild(node.firstChild); return node; }

// Empties `node` and fills it with `kids` (lists flattened; strings as text).
function fill(node, ...kids) {
  clear(node);
  for (const k of kids.flat(Infinity)) {
    if (k === null || k === undefined || k === false) continue;
    node.append(typeof k === 'string' ? document.createTextNode(k) : k);
  }
  return node;
}

async function call(method, path, body) {
  const init = { method, credentials: 'same-origin', headers: {} };
  if (body instanceof FormData) init.body = body;
  else if (body !== undefined) {
    init.body = JSON.stringify(body);
    init.headers['Content-Type'] = 'application/json';
  }
  let r;
  try { r = await fetch(path, init); } catch (e) {
    return { ok: false, status: 0, data: { error: 'The server does not answer; is it still running?' } };
  }
  let data = null;
  try { data = await r.json(); } catch (e) { data = {}; }
  return { ok: r.ok, status: r.status, data: data || {} };
}

function number(v, digits) {
  if (v === null || v === undefined || v === '') return '–';
  if (typeof v !== 'number') return String(v);
  return v.toFixed(digits);
}

function points(v) {
  if (v === null || v === undefined) return '–';
  return Number.isInteger(v) ? String(v) : String(Math.round(v * 100) / 100);
}

function size(bytes) {
  if (bytes < 1024) return bytes + ' B';
  if (bytes < 1024 * 1024) return (bytes / 1024).toFixed(1) + ' kB';
  return (bytes / 1024 / 1024).toFixed(1) + ' MB';
}

function say(id, text, bad) {
  const p = $(id);
  p.textContent = text || '';
  p.classList.toggle('bad', !!bad);
}

const IMPOSSIBLE = new Set(['recovery-over-100', 'range-inverted', 'above-reference', 'nonpositive-mass',
  'missing-value', 'unreadable-value', 'unknown-compound', 'duplicate-student', 'gross-below-tare',
  'not-on-roster']);

// The row's standing: 'impossible', 'suspicious', 'excused' or 'clean'.
function standing(r) {
  if (r.status && r.status !== 'graded') return 'excused';
  const flags = r.flags || [];
  if (flags.some((f) => IMPOSSIBLE.has(f))) return 'impossible';
  return flags.length ? 'suspicious' : 'clean';
}

const MARK = { impossible: '!', suspicious: '?', excused: '–', clean: '' };
const MARK_WORDS = {
  impossible: 'has an impossible entry', suspicious: 'has a suspicious entry',
  excused: 'excused, not graded', clean: 'no flags',
};

function marker(kind) {
  if (kind === 'clean') return el('span', { class: 'visually-hidden', text: MARK_WORDS.clean });
  return el('span', {},
    el('span', { class: 'mark ' + kind, 'aria-hidden': 'true', text: MARK[kind] }),
    el('span', { class: 'visually-hidden', text: MARK_WORDS[kind] }));
}

function key(r) { return [r.source, r.sheet || '', r.row].join('\u0000'); }

// ---- loading ----

// One load at a time: a second call while one is on its way waits for it.
let loading = null;
function loadAll() {
  if (!loading) loading = load().finally(() => { loading = null; });
  return loading;
}

async function load() {
  const [files, results, columns, overrides, outputs, roster, corrections] = await Promise.all([
    call('GET', '/api/files'), call('GET', '/api/results'), call('GET', '/api/columns'),
    call('GET', '/api/overrides'), call('GET', '/api/outputs'), call('GET', '/api/roster'),
    call('GET', '/api/corrections')]);
  if (files.status === 401) { locked(); return; }
  page.files = files.data; page.results = results.data; page.columns = columns.data;
  page.overrides = overrides.data; page.outputs = outputs.data;
  page.roster = roster.data; page.corrections = corrections.data;
  rememberGrader();
  page.shown = results.data.revision;
  page.grading = !!results.data.grading || results.data.current > results.data.revision;
  render();
}

// The grader's name: kept by the browser, else the last name in overrides.csv (a browser keeps
// names per address, and `--port 0` gives a new address each start).
function rememberGrader() {
  for (const [id, list] of [['o-grader', (page.overrides && page.overrides.overrides) || []],
    ['c-grader', (page.corrections && page.corrections.corrections) || []]]) {
    const field = $(id);
    if (field.value.trim()) continue;
    const other = $(id === 'o-grader' ? 'c-grader' : 'o-grader').value.trim();
    field.value = other || (list.length ? list[list.length - 1].grader || '' : '');
  }
}

function locked() {
  say('run-state', 'This page has lost its key: open the address benchgrade serve printed.', true);
}

function render() {
  renderRun();
  renderFiles();
  renderRoster();
  renderColumns();
  renderFilter();
  renderStudents();
  renderDetail();
  renderCorrections();
  renderOverrides();
  renderOutputs();
}

// After a change: wait for the run that includes it, then show everything again.
async function afterChange(revision) {
  page.grading = true;
  renderRun();
  await call('GET', '/api/results?revision=' + encodeURIComponent(revision));
  if (loading) await loading;
  if (page.shown < revision) await loadAll();
}

// A long poll on the run state: a run finished, or a file was changed by hand.
async function watch() {
  for (;;) {
    const q = page.version === null ? '' : '?since=' + page.version;
    const s = await call('GET', '/api/status' + q);
    if (s.status === 401) { locked(); return; }
    if (!s.ok) {
      if (s.status === 0) say('run-state', s.data.error, true);
      await new Promise((r) => setTimeout(r, 3000));
      continue;
    }
    page.version = s.data.version;
    page.grading = s.data.grading || s.data.revision > s.data.graded;
    if (s.data.graded !== page.shown) await loadAll(); else renderRun();
  }
}

// ---- the run ----

function renderRun() {
  const res = page.results || {};
  const run = $('run');
  run.setAttribute('aria-busy', page.grading ? 'true' : 'false');
  if (page.grading) say('run-state', 'Grading…');
  else if (res.summary) say('run-state', 'Up to date: graded in ' + (res.millis / 1000).toFixed(2) + ' s.');
  else say('run-state', 'Nothing graded yet.');
  const s = res.summary;
  $('run-tally').textContent = s
    ? `${s.submissions} submissions from ${s.files} files: ${s.impossible} with impossible entries (!), ${s.suspicious} suspicious only (?), ${s.clean} clean` + (s.excused ? `, ${s.excused} excused` : '') + '.'
    : '';
  const banner = $('run-error');
  const noFiles = page.files && page.files.files && page.files.files.length === 0;
  if (res.error && !noFiles) {
    banner.textContent = 'The last run wrote nothing: ' + res.error;
    banner.hidden = false;
  } else banner.hidden = true;
}

// ---- 1. files ----

function problemItem(p) {
  const where = p.sheet ? `sheet “${p.sheet}”: ` : '';
  return el('li', { class: p.fatal ? 'problem fatal' : 'problem' },
    el('span', { class: 'kind', text: p.fatal ? '! needs attention: ' : 'note: ' }),
    where + pageWords(p.message));
}

function renderFiles() {
  const body = clear($('file-rows'));
  const data = page.files || { files: [] };
  if (data.upload_limit) $('limit').textContent = Math.round(data.upload_limit / 1048576) + ' MB';
  $('no-files').hidden = data.files.length > 0;
  $('file-table').hidden = data.files.length === 0;
  for (const f of data.files) {
    const sheets = f.sheets.map((s) => (s.sheet ? s.sheet + ': ' : '') + s.students + (s.students === 1 ? ' student' : ' students')).join('; ');
    const calibration = /calibration/i.test(f.name.replace(/\.[^.]*$/, ''));
    const found = f.problems.length
      ? el('ul', { class: 'problems' }, f.problems.map(problemItem))
      : (calibration ? 'the apparatus calibration, applied to the readings' : (f.sheets.length ? 'read without problems' : ''));
    body.append(el('tr', {},
      el('th', { scope: 'row', class: 'name' }, f.name),
      el('td', { class: 'num' }, size(f.size)),
      el('td', {}, sheets || '–'),
      el('td', {}, found),
      el('td', {}, el('button', { type: 'button', class: 'quiet-button', 'aria-label': 'Remove ' + f.name, onclick: () => removeFile(f.name) }, 'Remove'))));
  }
  const other = (data.other_problems || []);
  if (other.length) {
    body.append(el('tr', {}, el('th', { scope: 'row' }, 'Other'), el('td', {}), el('td', {}),
      el('td', {}, el('ul', { class: 'problems' }, other.map((p) => problemItem({ ...p, message: p.file + ': ' + p.message })))), el('td', {})));
  }
}

async function upload(fileList) {
  const files = Array.from(fileList || []);
  if (!files.length) return;
  const form = new FormData();
  for (const f of files) form.append('file', f, f.name);
  say('upload-message', `Adding ${files.length} file${files.length > 1 ? 's' : ''}…`);
  const r = await call('POST', '/api/files', form);
  $('file-input').value = '';
  if (!r.ok) {
    const limit = page.files ? Math.round(page.files.upload_limit / 1048576) : 50;
    const why = r.data.error || (r.status === 413 ? `the upload is larger than the limit of ${limit} MB; nothing was stored` : 'the upload was refused');
    say('upload-message', 'Not added: ' + why, true);
    return;
  }
  say('upload-message', 'Added ' + r.data.stored.join(', ') + '. Grading…');
  await afterChange(r.data.revision);
  say('upload-message', 'Added ' + r.data.stored.join(', ') + '.');
}

async function removeFile(name) {
  if (!window.confirm(`Remove ${name} from the workspace? Its students leave the graded section.`)) return;
  const r = await call('DELETE', '/api/files/' + name.split('/').map(encodeURIComponent).join('/'));
  if (!r.ok) { say('upload-message', 'Not removed: ' + (r.data.error || r.status), true); return; }
  say('upload-message', 'Removed ' + name + '.');
  await afterChange(r.data.revision);
}

// ---- 2. columns ----

// The [columns] table's key for one sheet: the file's name, or its path from the workspace
// when it sits in a sub-folder of inputs/ (two sections' files may share a name).
function scopeKey(sheet) {
  const file = sheet.file.includes('/') ? 'inputs/' + sheet.file : sheet.file;
  return sheet.sheet === null || sheet.sheet === undefined ? file : `${file} [${sheet.sheet}]`;
}

function mappingOf(sheet, letter) {
  const table = (page.columns && page.columns.columns) || {};
  const scoped = table[scopeKey(sheet)];
  if (scoped && typeof scoped === 'object') return scoped['column ' + letter];
  return undefined;
}

async function setMapping(sheet, letter, value) {
  const table = JSON.parse(JSON.stringify((page.columns && page.columns.columns) || {}));
  const k = scopeKey(sheet);
  if (typeof table[k] !== 'object' || table[k] === null) table[k] = {};
  if (value === null) delete table[k]['column ' + letter]; else table[k]['column ' + letter] = value;
  if (Object.keys(table[k]).length === 0) delete table[k];
  say('columns-message', 'Saving…');
  const r = await call('PUT', '/api/columns', { columns: table });
  if (!r.ok) { say('columns-message', 'Not saved: ' + (r.data.error || r.status), true); return; }
  say('columns-message', 'Saved in columns.toml. Grading…');
  await afterChange(r.data.revision);
  say('columns-message', 'Saved in columns.toml.');
}

function fieldSelect(sheet, c, id) {
  const fields = (page.columns && page.columns.fields) || [];
  const current = c.field || 'ignore';
  const select = el('select', { id },
    el('option', { value: 'ignore', selected: current === 'ignore' }, 'not used'),
    fields.map((f) => el('option', { value: f.key, selected: current === f.key }, f.label)));
  select.addEventListener('change', () => setMapping(sheet, c.letter, select.value));
  return select;
}

function sheetBlock(sheet, n) {
  const layout = sheet.layout;
  const missing = (layout.missing || []).map((k) => fieldLabel(k));
  const troubled = missing.length > 0 || layout.columns.some((c) => c.note && /could be/.test(c.note));
  const rows = layout.columns.map((c, i) => {
    const id = `col-${n}-${i}`;
    const mine = mappingOf(sheet, c.letter) !== undefined;
    const how = mine ? 'set here' : (c.explicit ? 'mapped in columns.toml' : (c.field ? 'recognised' : ''));
    return el('tr', {},
      el('td', { class: 'letter' }, c.letter),
      el('th', { scope: 'row' }, el('label', { for: id }, '“' + c.header + '”')),
      el('td', {}, fieldSelect(sheet, c, id)),
      el('td', { class: 'quiet' }, how, c.note ? el('span', { class: 'note' }, (how ? ' – ' : '') + pageWords(c.note)) : null),
      el('td', {}, mine ? el('button', { type: 'button', class: 'quiet-button', onclick: () => setMapping(sheet, c.letter, null) }, 'Undo') : null));
  });
  const title = sheet.file + (sheet.sheet ? ` · sheet “${sheet.sheet}”` : '');
  const facts = `header row ${layout.header_row}, ${sheet.students} ${sheet.students === 1 ? 'student' : 'students'}` + (missing.length ? ` – no column holds: ${missing.join(', ')}` : '');
  // a panel the assistant opened (or closed) stays so when the page redraws after a regrade
  const key = sheet.file + '\u0000' + (sheet.sheet || '');
  const open = page.openSheets.has(key) ? page.openSheets.get(key) : troubled;
  const block = el('details', { class: troubled ? 'sheet troubled' : 'sheet', open: open || undefined },
    el('summary', {}, troubled ? marker('suspicious') : null, el('strong', {}, title), ' ', el('span', { class: 'quiet' }, facts)),
    el('table', { class: 'grid compact' },
      el('thead', {}, el('tr', {}, el('th', { scope: 'col' }, 'Column'), el('th', { scope: 'col' }, 'Header as written'),
        el('th', { scope: 'col' }, 'Read as'), el('th', { scope: 'col' }, 'How'), el('th', { scope: 'col' }, el('span', { class: 'visually-hidden' }, 'Undo')))),
      el('tbody', {}, rows)));
  block.addEventListener('toggle', () => page.openSheets.set(key, block.open));
  return block;
}

// The run's notes name the command line's way to map a column; on the page it is the list.
function pageWords(note) {
  return note.replace(/; say which in a --columns file: .*$/, '; choose which in the list')
    .replace(/; say which holds it in a --columns file.*$/, '; choose in the list which one holds it')
    .replace(/; if one holds it, map it in a --columns file.*$/, '; if one holds it, choose its field under “Columns as read”');
}

function fieldLabel(k) {
  const f = ((page.columns && page.columns.fields) || []).find((x) => x.key === k);
  return f ? f.label : k;
}

function renderColumns() {
  const box = clear($('sheets'));
  const data = page.columns || {};
  if (data.error) say('columns-message', 'columns.toml cannot be read: ' + data.error, true);
  const sheets = data.sheets || [];
  if (!sheets.length) box.append(el('p', { class: 'empty' }, 'No sheet read yet.'));
  sheets.forEach((s, n) => box.append(sheetBlock(s, n)));
}

// ---- 3. students ----

const COLUMNS = [
  { key: 'mark', label: 'Mark', sort: (r) => ({ impossible: 0, suspicious: 1, excused: 2, clean: 3 })[standing(r)] },
  { key: 'section', label: 'Section', sort: (r) => r.section || '' },
  { key: 'student_id', label: 'Student id', sort: (r) => r.student_id || '' },
  { key: 'student_name', label: 'Name', sort: (r) => r.student_name || '' },
  { key: 'recovery_pct', label: 'Recovery %', num: true, sort: (r) => r.recovery_pct },
  { key: 'range', label: 'Melting range °C', sort: (r) => r.mp_clear_c },
  { key: 'score', label: 'Score', num: true, sort: (r) => r.score },
  { key: 'letter', label: 'Letter', sort: (r) => r.letter || '' },
  { key: 'flags', label: 'Why flagged', sort: (r) => (r.flags || []).join(' ') },
];

function renderFilter() {
  const select = $('filter');
  const before = page.filter;
  const codes = new Set();
  for (const r of records()) for (const f of r.flags || []) codes.add(f);
  fill(select,
    el('option', { value: 'all' }, 'every student'),
    el('option', { value: 'impossible' }, 'with an impossible entry (!)'),
    el('option', { value: 'suspicious' }, 'suspicious only (?)'),
    el('option', { value: 'clean' }, 'without flags'),
    el('option', { value: 'excused' }, 'excused'),
    Array.from(codes).sort().map((c) => el('option', { value: 'flag:' + c }, 'flagged ' + c)));
  select.value = Array.from(select.options).some((o) => o.value === before) ? before : 'all';
  page.filter = select.value;
}

function records() { return (page.results && page.results.records) || []; }

function visible() {
  const q = page.search.trim().toLowerCase();
  const rows = records().filter((r) => {
    const f = page.filter;
    if (f.startsWith('flag:') && !(r.flags || []).includes(f.slice(5))) return false;
    if (!f.startsWith('flag:') && f !== 'all' && standing(r) !== f) return false;
    if (!q) return true;
    return (r.student_id || '').toLowerCase().includes(q) || (r.student_name || '').toLowerCase().includes(q);
  });
  const col = COLUMNS.find((c) => c.key === page.sort.key);
  if (col) {
    const dir = page.sort.up ? 1 : -1;
    rows.sort((a, b) => {
      const x = col.sort(a); const y = col.sort(b);
      if (x === y) return 0;
      if (x === null || x === undefined) return 1;
      if (y === null || y === undefined) return -1;
      return (x < y ? -1 : 1) * dir;
    });
  }
  return rows;
}

function renderHead() {
  const head = clear($('student-head'));
  for (const c of COLUMNS) {
    const on = page.sort.key === c.key;
    const th = el('th', { scope: 'col', class: c.num ? 'num' : null, 'aria-sort': on ? (page.sort.up ? 'ascending' : 'descending') : 'none' },
      el('button', { type: 'button', class: 'sort', onclick: () => sortBy(c.key) }, c.label,
        el('span', { class: 'arrow', 'aria-hidden': 'true', text: on ? (page.sort.up ? ' ▲' : ' ▼') : '' })));
    head.append(th);
  }
}

function sortBy(k) {
  page.sort = page.sort.key === k ? { key: k, up: !page.sort.up } : { key: k, up: true };
  renderStudents();
  const th = Array.from($('student-head').children).find((t) => t.getAttribute('aria-sort') !== 'none');
  if (th) th.querySelector('button').focus();
}

function rangeText(r) {
  if (r.mp_onset_c === null && r.mp_clear_c === null) return '–';
  return number(r.mp_onset_c, 1) + '–' + number(r.mp_clear_c, 1);
}

function studentRow(r) {
  const kind = standing(r);
  const selected = page.selected === key(r);
  const notes = (r.flag_notes || []).map((n, i) => {
    const code = (r.flags || [])[i] || '';
    const k = IMPOSSIBLE.has(code) ? 'impossible' : 'suspicious';
    const why = n.startsWith(code + ': ') ? n.slice(code.length) : ': ' + n;
    return el('li', {}, el('span', { class: 'mark small ' + k, 'aria-hidden': 'true', text: MARK[k] }), ' ',
      el('span', { class: 'code' }, code), el('span', { class: 'reason' }, why));
  });
  return el('tr', { class: kind + (selected ? ' selected' : ''), 'data-key': key(r) },
    el('td', { class: 'markcell' }, marker(kind)),
    el('td', {}, r.section || ''),
    el('th', { scope: 'row' }, el('button', { type: 'button', class: 'link', 'aria-label': 'Open ' + (r.student_id || 'row ' + r.row), onclick: () => openStudent(r) }, r.student_id || '(no id)')),
    el('td', { class: 'name' }, r.student_name || ''),
    el('td', { class: 'num' }, number(r.recovery_pct, 1)),
    el('td', { class: 'num' }, rangeText(r)),
    el('td', { class: 'num' }, r.score === null ? '–' : points(r.score)),
    el('td', {}, r.letter || ''),
    el('td', { class: 'why' }, notes.length ? el('ul', { class: 'flags' }, notes) : ''));
}

function renderStudents() {
  renderHead();
  const body = clear($('student-rows'));
  const rows = visible();
  for (const r of rows) body.append(studentRow(r));
  $('no-students').hidden = records().length > 0;
  $('shown-count').textContent = records().length ? `${rows.length} of ${records().length} shown` : '';
}

function openStudent(r) {
  page.selected = key(r);
  renderStudents();
  renderDetail();
  $('detail-h').focus();
}

// ---- the student opened ----

function facts(title, pairs) {
  return el('section', { class: 'facts' }, el('h4', {}, title),
    el('dl', {}, pairs.filter((p) => p[1] !== null && p[1] !== undefined && p[1] !== '' && p[1] !== '–')
      .map(([k, v]) => [el('dt', {}, k), el('dd', {}, v)])));
}

function pointsTable(r) {
  const crit = (page.results && page.results.criteria) || [];
  const pts = r.points || {};
  return el('table', { class: 'grid compact points' },
    el('caption', {}, 'Points'),
    el('thead', {}, el('tr', {}, el('th', { scope: 'col' }, 'Criterion'), el('th', { scope: 'col', class: 'num' }, 'Points'), el('th', { scope: 'col', class: 'num' }, 'Of'))),
    el('tbody', {}, crit.map((c) => el('tr', {}, el('th', { scope: 'row' }, c.label), el('td', { class: 'num' }, points(pts[c.id])), el('td', { class: 'num' }, points(c.max)))),
      el('tr', { class: 'total' }, el('th', { scope: 'row' }, 'Total' + (r.letter ? ' (' + r.letter + ')' : '')), el('td', { class: 'num' }, points(r.score)), el('td', { class: 'num' }, points(r.max_score)))));
}

function detailBody(r) {
  const observed = r.mp_onset_observed_c !== null && r.mp_onset_observed_c !== undefined
    ? number(r.mp_onset_observed_c, 1) + '–' + number(r.mp_clear_observed_c, 1) + ' °C' : rangeText(r) + ' °C';
  const flags = (r.flag_notes || []).map((n, i) => {
    const k = IMPOSSIBLE.has((r.flags || [])[i]) ? 'impossible' : 'suspicious';
    return el('li', { class: k }, marker(k), ' ', n);
  });
  return [
    flags.length ? el('ul', { class: 'flags big' }, flags) : el('p', { class: 'quiet' }, standing(r) === 'excused' ? 'Excused, not graded: no score, flags or letter.' : 'No flags.'),
    facts('As read', [['Crude mass', number(r.crude_mass_g, 3) + ' g'], ['Recovered mass', number(r.recovered_mass_g, 3) + ' g'],
      ['Solvent', r.solvent_volume_ml === null ? null : number(r.solvent_volume_ml, 1) + ' mL' + (r.solvent ? ' ' + r.solvent : '')],
      ['Melting range read', observed], ['Reported recovery', r.reported_recovery_pct === null ? null : number(r.reported_recovery_pct, 1) + ' %'],
      ['Compound', r.compound], ['Bench', r.bench], ['Apparatus', r.apparatus], ['Assistant', r.assistant]]),
    facts('Recomputed', [['Recovery', number(r.recovery_pct, 1) + ' %'], ['Melting range used', rangeText(r) + ' °C'],
      ['Range width', number(r.range_width_c, 1) + ' °C'], ['Literature value', number(r.reference_mp_c, 1) + ' °C'],
      ['Depression', number(r.depression_c, 1) + ' °C'], ['Purity', r.purity_mol_pct === null ? null : number(r.purity_mol_pct, 1) + ' mol %'],
      ['Recovery ceiling', r.max_recovery_pct === null ? null : number(r.max_recovery_pct, 1) + ' %'],
      ['Least solvent', r.min_solvent_ml === null ? null : number(r.min_solvent_ml, 1) + ' mL'], ['Calibration', r.calibration]]),
    pointsTable(r),
    el('h4', {}, 'Feedback'), el('p', { class: 'feedback' }, r.feedback || '–'),
    r.sheet_notes ? [el('h4', {}, 'Sheet notes'), el('p', { class: 'sheet-notes' }, r.sheet_notes)] : null,
    (r.overrides || []).length ? [el('h4', {}, 'Overrides applied'), el('ul', {}, r.overrides.map((o) => el('li', {}, o)))] : null,
  ];
}

function renderDetail() {
  const r = records().find((x) => key(x) === page.selected);
  const aside = $('detail');
  aside.hidden = !r;
  aside.parentElement.classList.toggle('open', !!r);
  if (!r) return;
  $('detail-h').textContent = (r.student_id || '(no id)') + (r.student_name ? ' · ' + r.student_name : '');
  $('detail-where').textContent = `Section ${r.section} · ${r.source.replace(/^inputs\//, '')}` + (r.sheet ? `, sheet ${r.sheet}` : '') + `, row ${r.row}`;
  fill($('detail-body'), detailBody(r));
  const select = $('o-criterion');
  const before = select.value;
  const crit = (page.results && page.results.criteria) || [];
  fill(select, el('option', { value: 'total' }, 'Total'), crit.map((c) => el('option', { value: c.id }, `${c.label} (of ${points(c.max)})`)));
  if (Array.from(select.options).some((o) => o.value === before)) select.value = before;
  $('override-form').hidden = standing(r) === 'excused' || !r.student_id;
  $('detail-correct').hidden = !r.student_id || r.status === 'no-submission';
}

function fieldError(field, text) {
  const ids = { criterion: 'o-criterion', points: 'o-value', adjust: 'o-value', reason: 'o-reason', grader: 'o-grader' };
  for (const id of Object.values(ids)) { $(id).removeAttribute('aria-invalid'); $(id + '-error').textContent = ''; }
  $('o-other-error').textContent = '';
  if (!text) return;
  const id = ids[field];
  if (id) { $(id).setAttribute('aria-invalid', 'true'); $(id + '-error').textContent = text; $(id).focus(); } else $('o-other-error').textContent = text;
}

async function saveOverride(ev) {
  ev.preventDefault();
  const r = records().find((x) => key(x) === page.selected);
  if (!r) return;
  const mode = document.querySelector('input[name="mode"]:checked').value;
  const grader = $('o-grader').value.trim();
  const body = { student_id: r.student_id, section: r.section, criterion: $('o-criterion').value, reason: $('o-reason').value, grader };
  body[mode] = $('o-value').value;
  fieldError(null);
  say('override-message', 'Saving…');
  const res = await call('POST', '/api/overrides', body);
  if (!res.ok) { say('override-message', ''); fieldError(res.data.field, res.data.error || 'not saved'); return; }
  rememberName(grader);
  $('o-value').value = ''; $('o-reason').value = '';
  say('override-message', `Saved on line ${res.data.line} of overrides.csv. Grading…`);
  await afterChange(res.data.revision);
  say('override-message', `Saved on line ${res.data.line} of overrides.csv and applied.`);
}

// ---- 4. overrides ----

function criterionLabel(id) {
  if (id === 'total') return 'Total';
  const c = ((page.results && page.results.criteria) || []).find((x) => x.id === id);
  return c ? c.label : id;
}

function renderOverrides() {
  const data = page.overrides || { overrides: [] };
  const body = clear($('override-rows'));
  say('overrides-message', data.error ? 'overrides.csv cannot be read: ' + data.error : '', !!data.error);
  for (const o of data.overrides) {
    const change = o.points !== null ? 'set to ' + points(o.points) : (o.adjust >= 0 ? '+' : '') + points(o.adjust);
    body.append(el('tr', {},
      el('td', { class: 'num' }, o.line), el('th', { scope: 'row' }, o.student_id), el('td', {}, o.section || 'any'),
      el('td', {}, criterionLabel(o.criterion)), el('td', {}, change), el('td', {}, o.reason), el('td', {}, o.grader),
      el('td', {}, el('button', { type: 'button', class: 'quiet-button', 'aria-label': `Remove the override on line ${o.line}`, onclick: () => removeOverride(o.line) }, 'Remove'))));
  }
  $('no-overrides').hidden = data.overrides.length > 0;
  $('override-table').hidden = data.overrides.length === 0;
}

async function removeOverride(line) {
  if (!window.confirm(`Remove the override on line ${line} of overrides.csv?`)) return;
  const r = await call('DELETE', '/api/overrides/' + line);
  if (!r.ok) { say('overrides-message', 'Not removed: ' + (r.data.error || r.status), true); return; }
  say('overrides-message', 'Removed. Grading…');
  await afterChange(r.data.revision);
  say('overrides-message', 'Removed.');
}

// ---- 5. outputs ----

const OUTPUT_WORDS = [
  [/-graded\.xlsx$/, 'graded workbook to hand back'],
  [/^gradebook\.csv$/, 'gradebook, one mark a student, for importing elsewhere in the course'],
  [/^cohort-report\.html$/, 'cohort report for the coordinator (names no student)'],
  [/^cohort-report\.xlsx$/, 'cohort report as a workbook'],
  [/^results\.(csv|json|parquet)$/, 'every record, for analysis'],
  [/^section-stats\.csv$/, 'statistics per section'],
  [/^section-comparison\.csv$/, 'sections compared'],
  [/^bench-bias\.csv$/, 'benches and apparatus compared'],
];

function renderOutputs() {
  const list = clear($('output-list'));
  const outs = (page.outputs && page.outputs.outputs) || [];
  $('no-outputs').hidden = outs.length > 0;
  for (const o of outs) {
    const words = (OUTPUT_WORDS.find(([re]) => re.test(o.name)) || [null, ''])[1];
    const href = '/api/outputs/' + encodeURIComponent(o.name);
    const viewable = /\.(html|csv)$/.test(o.name);
    list.append(el('li', {},
      el('a', { href, download: o.name }, o.name), ' ',
      el('span', { class: 'quiet' }, size(o.size) + (words ? ' · ' + words : '')),
      viewable ? [' ', el('a', { href: href + '?view=1', target: '_blank', rel: 'noopener', class: 'open' }, 'open', el('span', { class: 'visually-hidden' }, ' ' + o.name + ' in a new tab'))] : null));
  }
}

// ---- wiring ----

function wire() {
  const input = $('file-input');
  input.addEventListener('change', () => upload(input.files));
  const drop = $('drop');
  drop.addEventListener('dragover', (e) => { e.preventDefault(); drop.classList.add('over'); });
  drop.addEventListener('dragleave', () => drop.classList.remove('over'));
  drop.addEventListener('drop', (e) => { e.preventDefault(); drop.classList.remove('over'); upload(e.dataTransfer.files); });
  $('filter').addEventListener('change', (e) => { page.filter = e.target.value; renderStudents(); });
  $('search').addEventListener('input', (e) => { page.search = e.target.value; renderStudents(); });
  const closeDetail = () => {
    const k = page.selected; page.selected = null; renderStudents(); renderDetail();
    const row = Array.from($('student-rows').children).find((tr) => tr.dataset.key === k);
    if (row) row.querySelector('button').focus();
  };
  $('detail-close').addEventListener('click', closeDetail);
  $('detail').addEventListener('keydown', (e) => { if (e.key === 'Escape') closeDetail(); });
  $('override-form').addEventListener('submit', saveOverride);
  $('correction-form').addEventListener('submit', saveCorrection);
  $('detail-correct').addEventListener('click', () => {
    const r = records().find((x) => key(x) === page.selected);
    if (!r) return;
    $('c-student').value = r.student_id || ''; $('c-section').value = r.section || '';
    $('corrections').scrollIntoView();
    $('c-field').focus();
  });
  const rosterInput = $('roster-input');
  rosterInput.addEventListener('change', () => uploadRoster(rosterInput.files));
  $('make-templates').addEventListener('click', makeTemplates);
  for (const radio of document.querySelectorAll('input[name="mode"]')) {
    radio.addEventListener('change', () => { $('o-value').previousElementSibling.textContent = radio.value === 'points' ? 'Points' : 'Points to add (negative to take away)'; });
  }
  try {
    const name = window.localStorage.getItem('benchgrade.grader') || '';
    $('o-grader').value = name; $('c-grader').value = name;
  } catch (e) { /* private window */ }
}

document.addEventListener('DOMContentLoaded', async () => {
  wire();
  await loadAll();
  watch();
});
