// The workspace page's roster and corrections (loaded after workspace.js, whose helpers and
// `page` state it uses): the roster uploaded or removed, the entry workbooks made and listed,
// the students with no row and the ids not on the roster with a one-click correction, and the
// corrections form and list. As in workspace.js, text from a spreadsheet goes into the page as
// text only.
'use strict';

// ---- the roster ----

function renderRoster() {
  const data = page.roster || { roster: null, no_submission: [], not_on_roster: [], templates: [] };
  const r = data.roster;
  fill($('roster-state'), r
    ? [el('strong', {}, r.name), ' ' + size(r.size) + ', used by every run as --roster. ',
      el('button', { type: 'button', class: 'quiet-button', onclick: removeRoster }, 'Remove the roster')]
    : 'No roster yet: until there is one, students who never submitted cannot be listed and ids are not checked.');
  $('make-templates').disabled = !r;
  const list = clear($('template-list'));
  for (const t of data.templates || []) {
    list.append(el('li', {}, el('a', { href: '/api/templates/' + encodeURIComponent(t.name), download: t.name }, t.name), ' ',
      el('span', { class: 'quiet' }, size(t.size))));
  }
  const missing = clear($('no-submission'));
  let count = 0;
  for (const s of data.no_submission || []) {
    count += s.students.length;
    missing.append(el('div', { class: 'missing-section' },
      el('h4', {}, `${s.section} · ${s.students.length} without a row`),
      el('ul', {}, s.students.map((st) => el('li', {}, el('span', { class: 'code' }, st.student_id || ''), ' ', st.student_name || '')))));
  }
  $('none-missing').textContent = r ? 'Every enrolled student has a row.' : 'Listed once a roster is uploaded.';
  $('none-missing').hidden = count > 0;
  const body = clear($('off-roster-rows'));
  const off = data.not_on_roster || [];
  for (const o of off) {
    const where = String(o.source || '').replace(/^inputs\//, '') + (o.sheet ? ', sheet ' + o.sheet : '') + ', row ' + o.row;
    const action = o.nearest
      ? el('button', { type: 'button', class: 'primary small', 'aria-label': `Correct id ${o.student_id} to ${o.nearest}`, onclick: () => correctId(o) }, 'Correct to ' + o.nearest)
      : el('span', { class: 'quiet' }, 'none one slip away with this name');
    body.append(el('tr', {}, el('th', { scope: 'row' }, o.student_id || ''), el('td', { class: 'name' }, o.student_name || ''),
      el('td', {}, o.section || ''), el('td', { class: 'quiet' }, where), el('td', {}, action)));
  }
  $('off-roster-table').hidden = off.length === 0;
  $('none-off-roster').textContent = r ? 'No row has an id that is not on the roster.' : 'Checked once a roster is uploaded.';
  $('none-off-roster').hidden = off.length > 0;
}

async function uploadRoster(fileList) {
  const f = (fileList || [])[0];
  if (!f) return;
  const form = new FormData();
  form.append('file', f, f.name);
  say('roster-message', 'Storing the roster…');
  const r = await call('POST', '/api/roster', form);
  $('roster-input').value = '';
  if (!r.ok) { say('roster-message', 'Not stored: ' + (r.data.error || r.status), true); return; }
  say('roster-message', `Stored as ${r.data.stored}. Grading…`);
  await afterChange(r.data.revision);
  say('roster-message', `Stored as ${r.data.stored} and graded.`);
}

async function removeRoster() {
  if (!window.confirm('Remove the roster? The workspace is then graded without one.')) return;
  const r = await call('DELETE', '/api/roster');
  if (!r.ok) { say('roster-message', 'Not removed: ' + (r.data.error || r.status), true); return; }
  say('roster-message', 'Removed. Grading…');
  await afterChange(r.data.revision);
  say('roster-message', 'Removed.');
}

async function makeTemplates() {
  say('templates-message', 'Making the entry workbooks…');
  const r = await call('POST', '/api/templates');
  if (!r.ok) { say('templates-message', 'Not made: ' + (r.data.error || r.status), true); return; }
  say('templates-message', `Made ${r.data.templates.length} entry workbook${r.data.templates.length === 1 ? '' : 's'}: download below.`);
  page.roster = (await call('GET', '/api/roster')).data;
  renderRoster();
}

// The one-click correction of a mistyped id: the enrolled id the run found one slip away.
async function correctId(o) {
  const grader = $('c-grader').value.trim();
  if (!grader) {
    say('roster-message', 'Type your name in the Corrections form first: every correction records who made it.', true);
    $('c-grader').focus();
    return;
  }
  say('roster-message', `Correcting ${o.student_id} to ${o.nearest}…`);
  const res = await call('POST', '/api/corrections', { student_id: o.student_id, section: o.section, field: 'student_id', value: o.nearest,
    reason: 'id confirmed against the roster (one typing slip)', grader });
  if (!res.ok) { say('roster-message', 'Not corrected: ' + (res.data.error || res.status), true); return; }
  rememberName(grader);
  say('roster-message', `Corrected on line ${res.data.line} of corrections.csv. Grading…`);
  await afterChange(res.data.revision);
  say('roster-message', `Id ${o.student_id} corrected to ${o.nearest} and graded.`);
}

// ---- corrections ----

function rememberName(grader) {
  try { window.localStorage.setItem('benchgrade.grader', grader); } catch (e) { /* private window */ }
}

function renderCorrections() {
  const data = page.corrections || { corrections: [], fields: [] };
  const select = $('c-field');
  const before = select.value;
  fill(select, (data.fields || []).map((f) => el('option', { value: f.key }, f.label)));
  if (Array.from(select.options).some((o) => o.value === before)) select.value = before;
  const body = clear($('correction-rows'));
  say('corrections-message', data.error ? 'corrections.csv cannot be read: ' + data.error : '', !!data.error);
  const label = (k) => ((data.fields || []).find((f) => f.key === k) || { label: k }).label;
  for (const c of data.corrections) {
    body.append(el('tr', {},
      el('td', { class: 'num' }, c.line), el('th', { scope: 'row' }, c.student_id), el('td', {}, c.section || 'any'),
      el('td', {}, label(c.field)), el('td', {}, c.value), el('td', {}, c.reason), el('td', {}, c.grader),
      el('td', {}, el('button', { type: 'button', class: 'quiet-button', 'aria-label': `Remove the correction on line ${c.line}`, onclick: () => removeCorrection(c.line) }, 'Remove'))));
  }
  $('no-corrections').hidden = data.corrections.length > 0;
  $('correction-table').hidden = data.corrections.length === 0;
}

function correctionError(field, text) {
  const ids = { student_id: 'c-student', section: 'c-section', field: 'c-field', value: 'c-value', reason: 'c-reason', grader: 'c-grader' };
  for (const id of Object.values(ids)) { $(id).removeAttribute('aria-invalid'); $(id + '-error').textContent = ''; }
  $('c-other-error').textContent = '';
  if (!text) return;
  const id = ids[field];
  if (id) { $(id).setAttribute('aria-invalid', 'true'); $(id + '-error').textContent = text; $(id).focus(); } else $('c-other-error').textContent = text;
}

async function saveCorrection(ev) {
  ev.preventDefault();
  const grader = $('c-grader').value.trim();
  const body = { student_id: $('c-student').value, section: $('c-section').value, field: $('c-field').value,
    value: $('c-value').value, reason: $('c-reason').value, grader };
  correctionError(null);
  say('correction-message', 'Saving…');
  const res = await call('POST', '/api/corrections', body);
  if (!res.ok) { say('correction-message', ''); correctionError(res.data.field, res.data.error || 'not saved'); return; }
  rememberName(grader);
  $('c-value').value = ''; $('c-reason').value = '';
  say('correction-message', `Saved on line ${res.data.line} of corrections.csv. Grading…`);
  await afterChange(res.data.revision);
  say('correction-message', `Saved on line ${res.data.line} of corrections.csv and applied.`);
}

async function removeCorrection(line) {
  if (!window.confirm(`Remove the correction on line ${line} of corrections.csv?`)) return;
  const r = await call('DELETE', '/api/corrections/' + line);
  if (!r.ok) { say('corrections-message', 'Not removed: ' + (r.data.error || r.status), true); return; }
  say('corrections-message', 'Removed. Grading…');
  await afterChange(r.data.revision);
  say('corrections-message', 'Removed.');
}
