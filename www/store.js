// Turnover page, the document: everything a person enters lives in one
// plain, serialisable value (the "document"), changed only by named edits
// applied by one function, `applyEdit`. The section modules render from the
// document and dispatch edits; every result they show is derived from it.
//
// From that follow: undo and redo (a list of earlier documents), autosave
// (write the document after each edit), several named analyses kept in
// this browser, the saved page and the session file (the document as
// JSON), the share link (the document, compressed, after '#'), and the
// migration of documents written by earlier versions.
//
// This module loads first. It owns no DOM beyond the analysis bar; it makes
// no network request.

export const SCHEMA = 3;
export const FORMAT = 'turnover-document';

// ------------------------------------------------------------ the shape

/** The sections of a document with the default value of every field.
 *  Fields typed by a person are kept as the text they typed (never parsed
 *  here), so that what reopens is exactly what was entered. */
const DEFAULTS = {
  figure: { width_mm: '85', height_mm: '65', font_pt: '8', title: false, constants: false, error_bars: 'none', format: 'svg', dpi: '300' },
  assay: { enzyme: '', source: '', temperature: '', ph: '', buffer: '', method: '' },
  rates: {
    text: '', substrate_unit: '', rate_unit: '', enzyme: '', enzyme_unit: 'nM',
    protein: '', protein_unit: 'mg/mL', molar_mass: '', molar_mass_unit: 'kDa', rate_time: '',
    weighting: 'uniform', interval_method: 'asymptotic', resamples: '2000', seed: '1', resample_by: 'residual',
    compare_laws: false, excluded_lines: [], excluded_cells: [],
  },
  inhibition: { text: '', rate_unit: '', rate_time: '', excluded_lines: [], excluded_cells: [] },
  dose: {
    text: '', model: 'ic50', fix_top: false, top: '100', fix_bottom: false, bottom: '0', enzyme: '',
    cp_mechanism: '', cp_substrate: '', cp_km: '', cp_km_se: '', excluded_lines: [], rate_time: '',
  },
  traces: {
    text: '', layout: '', conversion: 'epsilon', preset: '', epsilon: '', path: '', volume: '', diameter: '',
    direction: 'rises', limit: '', max_conversion: '10', standard: '', windows: {}, excluded: [], whole_curve: false, fit_v0: false,
    inactivation: false, inact_substrate: '', inact_km: '', block: '', rates_from_v0: false, report_time: '',
  },
  batch: { text: '', group_by: '', model: 'ic50', weighting: 'uniform', normalise: false, fix_top: false, top: '100', fix_bottom: false, bottom: '0' },
  design: {
    model: 'mm', guesses: {}, noise_kind: 'proportional', noise: '5', points: '8', inhibitor_points: '4', replicates: '2',
    max_s: '', max_i: '', min_rate: '', target_parameter: '', target: '10', proposed: '', proposed_i: '', seed: '1', simulations: '200',
    substrate_stock: '', inhibitor_stock: '', well_volume: '200', substrate_unit: 'µM', inhibitor_unit: 'µM', rate_unit: 'µM/min',
  },
  // The further questions: which one is shown, and each one's own table
  // and options (schema 3).
  further: { kind: 'sets' },
  sets: { text: '', by: 'set', model: 'mm', enzyme: '', ceiling: '', floor: '', reference: '', weighting: 'uniform' },
  bisubstrate: { text: '', rate_unit: '', enzyme: '', enzyme_unit: 'nM', weighting: 'relative' },
  ph: { text: '', column: '', weighting: 'relative' },
  temperature: { text: '', column: '', at: '25 °C', weighting: 'relative' },
};

/** The questions the further-questions section can show. */
export const FURTHER_KINDS = ['sets', 'bisubstrate', 'ph', 'temperature'];

/** Fields a demo fills, per section: when a person's own table replaces a
 *  demo's, these leave with it (so the demo's [E]t never reaches a person's
 *  results). Settings such as weighting are the person's choice and stay. */
const DEMO_FIELDS = {
  assay: Object.keys(DEFAULTS.assay),
  rates: ['text', 'substrate_unit', 'rate_unit', 'enzyme', 'enzyme_unit', 'protein', 'molar_mass', 'excluded_lines', 'excluded_cells'],
  inhibition: ['text', 'rate_unit', 'excluded_lines', 'excluded_cells'],
  dose: ['text', 'enzyme', 'cp_mechanism', 'cp_substrate', 'cp_km', 'cp_km_se', 'excluded_lines'],
  traces: Object.keys(DEFAULTS.traces),
  further: [],
  design: ['guesses', 'target_parameter', 'proposed', 'substrate_stock'],
  batch: ['text', 'group_by', 'model'],
  sets: ['text', 'by', 'reference'],
  bisubstrate: ['text', 'rate_unit', 'enzyme'],
  ph: ['text', 'column'],
  temperature: ['text', 'column', 'at'],
};

/** Tables: editing one of these in a demo document makes it the person's own. */
const TABLE_PATHS = new Set(['rates.text', 'inhibition.text', 'dose.text', 'traces.text', 'traces.layout', 'traces.standard', 'sets.text', 'batch.text', 'ph.text', 'temperature.text', 'bisubstrate.text']);

/** The plate's description (which well holds what, the standard curve):
 *  edited on the demo plate, the readings are still the demo's invented
 *  ones, so the document stays a demo and keeps its other sections. */
const PLATE_DESCRIPTION = new Set(['traces.layout', 'traces.standard']);

/** The sections whose tables are pasted whole (each has its own input). */
export const TABLE_SECTIONS = ['rates', 'inhibition', 'dose'];

const UNTITLED = 'Untitled analysis';

const clone = (value) => JSON.parse(JSON.stringify(value));

export function newId() {
  const bytes = new Uint8Array(8);
  crypto.getRandomValues(bytes);
  return [...bytes].map((b) => b.toString(16).padStart(2, '0')).join('');
}

/** An empty document. */
export function blankDocument(name = UNTITLED) {
  const now = new Date().toISOString();
  return { format: FORMAT, schema: SCHEMA, id: newId(), name, created: now, notes: '', demo: [], ...clone(DEFAULTS) };
}

// ------------------------------------------------------------ edits

/** Every edit the page can make, by name, with the words Undo and Redo
 *  use for it. Edits are plain values: `{type, ...}`. */
export const EDIT_NAMES = {
  'set field': 'change a field',
  'set table': 'edit a table',
  'toggle point': 'leave a point out or bring it back',
  'toggle cell': 'leave a rate out or bring it back',
  'use all points': 'use all points',
  'set window': 'set a window',
  'automatic window': 'use the automatic window',
  'window for all': 'use one window for all traces',
  'all automatic': 'use automatic windows for all traces',
  'report time': 'change the time unit',
  'toggle trace': 'leave a trace out or bring it back',
  'choose preset': 'choose a chromophore',
  'move table': 'put a table into the section it belongs to',
  'fit whole curves': 'fit whole curves',
  'send rates': 'send rates to the fit',
  'load demo': 'load a demo',
  'rename': 'rename the analysis',
  'open analysis': 'open another analysis',
  'new analysis': 'start a new analysis',
  'duplicate analysis': 'duplicate the analysis',
  'delete analysis': 'delete the analysis',
  'import document': 'open a session file or link',
};

const get = (doc, path) => path.split('.').reduce((o, k) => (o === undefined ? undefined : o[k]), doc);

/** A copy of `doc` with `path` set to `value`; untouched parts are shared. */
function setPath(doc, path, value) {
  const [head, ...rest] = path.split('.');
  if (!rest.length) return { ...doc, [head]: value };
  return { ...doc, [head]: setPath(doc[head] ?? {}, rest.join('.'), value) };
}

/** A demo document's demo content leaves when a person's table arrives. */
function withoutDemo(doc) {
  if (!doc.demo.length) return doc;
  let out = { ...doc, demo: [], name: doc.name.startsWith('Demo') ? UNTITLED : doc.name };
  for (const section of doc.demo) {
    for (const field of DEMO_FIELDS[section]) out = setPath(out, `${section}.${field}`, clone(DEFAULTS[section][field]));
  }
  return out;
}

/** Exclusions name lines of a section's table; a new table clears them. */
function clearExclusions(doc, section) {
  if (section === 'inhibition' || section === 'rates') return setPath(setPath(doc, `${section}.excluded_lines`, []), `${section}.excluded_cells`, []);
  return setPath(doc, `${section}.excluded_lines`, []);
}

const toggled = (list, item) => (list.includes(item) ? list.filter((x) => x !== item) : [...list, item].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0)));

/** The one function that changes a document. Pure: returns a new document. */
export function applyEdit(doc, edit) {
  switch (edit.type) {
    case 'set field':
    case 'set table': {
      if (!(edit.path.split('.')[0] in DEFAULTS) && !['name', 'notes'].includes(edit.path)) throw new Error(`no field ${edit.path}`);
      if (get(doc, edit.path) === edit.value) return doc;
      let out = doc;
      const describesDemoPlate = PLATE_DESCRIPTION.has(edit.path) && doc.demo.includes('traces');
      if (TABLE_PATHS.has(edit.path) && doc.demo.length && !describesDemoPlate) out = withoutDemo(out);
      out = setPath(out, edit.path, edit.value);
      const [section, field] = edit.path.split('.');
      if (field === 'text' && TABLE_SECTIONS.includes(section)) out = clearExclusions(out, section);
      return out;
    }
    case 'move table': {
      // A table pasted into another section's input goes to its own
      // section; the input it was pasted into keeps what it had.
      if (!TABLE_SECTIONS.includes(edit.to)) throw new Error(`no section ${edit.to}`);
      let out = doc.demo.length ? withoutDemo(doc) : doc;
      out = setPath(out, `${edit.to}.text`, edit.value);
      return clearExclusions(out, edit.to);
    }
    case 'toggle point':
      return setPath(doc, `${edit.section}.excluded_lines`, toggled(get(doc, `${edit.section}.excluded_lines`), edit.line));
    case 'toggle cell': {
      const section = edit.section ?? 'inhibition';
      return setPath(doc, `${section}.excluded_cells`, toggled(doc[section].excluded_cells, edit.cell));
    }
    case 'use all points':
      return clearExclusions(doc, edit.section);
    case 'set window':
      return setPath(doc, 'traces.windows', { ...doc.traces.windows, [edit.trace]: [Math.min(edit.start, edit.end), Math.max(edit.start, edit.end)] });
    case 'automatic window': {
      const windows = { ...doc.traces.windows };
      delete windows[edit.trace];
      return setPath(doc, 'traces.windows', windows);
    }
    case 'window for all':
      return setPath(doc, 'traces.windows', { '*': [edit.start, edit.end] });
    case 'report time': {
      // The time unit of the analysis, with the windows set by hand
      // rescaled in the same step (`factor`: old unit in new units), so a
      // window keeps its place on the trace.
      let out = setPath(doc, 'traces.report_time', edit.value);
      if (edit.factor && edit.factor !== 1) {
        const windows = Object.fromEntries(Object.entries(doc.traces.windows).map(([trace, [a, b]]) => [trace, [a * edit.factor, b * edit.factor]]));
        out = setPath(out, 'traces.windows', windows);
      }
      return out;
    }
    case 'all automatic':
      return setPath(doc, 'traces.windows', {});
    case 'toggle trace':
      return setPath(doc, 'traces.excluded', toggled(doc.traces.excluded, edit.trace));
    case 'choose preset': {
      let out = setPath(doc, 'traces.preset', edit.preset);
      if (edit.epsilon !== undefined) out = setPath(setPath(out, 'traces.epsilon', edit.epsilon), 'traces.conversion', 'epsilon');
      return out;
    }
    case 'fit whole curves':
      return setPath(doc, 'traces.whole_curve', Boolean(edit.on));
    case 'send rates': {
      // The rate section now holds the plate's rates; a demo's [E]t and
      // units do not come along with them.
      let out = doc;
      if (doc.demo.includes('rates')) {
        out = { ...out, demo: out.demo.filter((s) => s !== 'rates') };
        for (const field of DEMO_FIELDS.rates) out = setPath(out, `rates.${field}`, clone(DEFAULTS.rates[field]));
      }
      out = setPath(out, 'rates.text', edit.table);
      out = setPath(out, 'rates.substrate_unit', '');
      out = setPath(out, 'rates.rate_unit', '');
      return clearExclusions(out, 'rates');
    }
    case 'rename':
      return edit.name === doc.name ? doc : { ...doc, name: edit.name };
    case 'load demo':
    case 'open analysis':
    case 'new analysis':
    case 'duplicate analysis':
    case 'import document':
    case 'delete analysis':
      return edit.document;
    default:
      throw new Error(`unknown edit ${edit.type}`);
  }
}

// ------------------------------------------------------------ validation

/** Checks a parsed value against the document shape. Returns
 *  `{document}` (migrated to the current schema) or `{error}`, a sentence
 *  saying what is wrong. Unknown fields are refused, not dropped. */
export function validateDocument(value, { classify = null } = {}) {
  if (value === null || typeof value !== 'object' || Array.isArray(value)) return { error: 'it is not a JSON object' };
  if (value.format === 'turnover-saved-state') return migrateSavedState(value, classify);
  if (value.format !== FORMAT) return { error: `its "format" is ${JSON.stringify(value.format ?? null)}, not "${FORMAT}"` };
  if (!Number.isInteger(value.schema)) return { error: 'it has no whole-number "schema" version' };
  if (value.schema > SCHEMA) return { error: `it was written by a newer Turnover (schema ${value.schema}); this page reads schema ${SCHEMA} and earlier` };
  if (value.schema < 2) return { error: `schema ${value.schema} is not a document schema this page knows` };
  const top = { format: 'string', schema: 'number', id: 'string', name: 'string', created: 'string', notes: 'string', demo: 'array' };
  for (const key of Object.keys(value)) {
    if (!(key in top) && !(key in DEFAULTS)) return { error: `it has an unknown field "${key}"` };
  }
  for (const [key, type] of Object.entries(top)) {
    const ok = type === 'array' ? Array.isArray(value[key]) : typeof value[key] === type;
    if (!ok) return { error: `"${key}" must be ${type === 'array' ? 'a list' : `a ${type === 'string' ? 'text' : type}`}` };
  }
  if (!/^[0-9a-f]{4,32}$/.test(value.id)) return { error: '"id" must be 4 to 32 hexadecimal digits' };
  if (value.demo.some((s) => !(s in DEFAULTS))) return { error: '"demo" names a section that does not exist' };
  const out = { format: FORMAT, schema: SCHEMA, id: value.id, name: value.name, created: value.created, notes: value.notes, demo: [...value.demo] };
  for (const [section, defaults] of Object.entries(DEFAULTS)) {
    const given = value[section];
    if (given === undefined) {
      out[section] = clone(defaults);
      continue;
    }
    if (given === null || typeof given !== 'object' || Array.isArray(given)) return { error: `"${section}" must be an object` };
    for (const key of Object.keys(given)) {
      if (!(key in defaults)) return { error: `"${section}" has an unknown field "${key}"` };
    }
    out[section] = {};
    for (const [key, fallback] of Object.entries(defaults)) {
      const v = given[key] === undefined ? clone(fallback) : given[key];
      const problem = fieldProblem(section, key, v, fallback);
      if (problem) return { error: `"${section}.${key}" ${problem}` };
      out[section][key] = clone(v);
    }
  }
  return { document: out };
}

function fieldProblem(section, key, v, fallback) {
  if (section === 'further' && key === 'kind' && !FURTHER_KINDS.includes(v)) return `must be one of ${FURTHER_KINDS.join(', ')}`;
  if (typeof fallback === 'string') return typeof v === 'string' ? null : 'must be text';
  if (typeof fallback === 'boolean') return typeof v === 'boolean' ? null : 'must be true or false';
  if (Array.isArray(fallback)) {
    if (!Array.isArray(v)) return 'must be a list';
    if (key === 'excluded_lines' && !v.every((x) => Number.isInteger(x) && x > 0)) return 'must list line numbers (whole numbers from 1)';
    if (key === 'excluded_cells' && !v.every((x) => typeof x === 'string' && /^\d+:\d+$/.test(x))) return 'must list cells as "line:column"';
    if (key === 'excluded' && !v.every((x) => typeof x === 'string')) return 'must list trace names';
    return null;
  }
  if (key === 'guesses') {
    if (v === null || typeof v !== 'object' || Array.isArray(v)) return 'must be an object of guesses';
    for (const [name, g] of Object.entries(v)) {
      if (!Array.isArray(g) || g.length !== 3 || !g.every((x) => typeof x === 'string')) return `has a bad guess for "${name}" (expected [value, lowest, highest] as text)`;
    }
    return null;
  }
  if (key === 'windows') {
    if (v === null || typeof v !== 'object' || Array.isArray(v)) return 'must be an object of trace windows';
    for (const [name, w] of Object.entries(v)) {
      if (!Array.isArray(w) || w.length !== 2 || !w.every(Number.isFinite) || w[0] > w[1]) return `has a bad window for trace "${name}" (expected [start, end] with start ≤ end)`;
    }
    return null;
  }
  return `has an unexpected value (section ${section})`;
}

/** Documents saved by Turnover 0.1's "Save page with data" (a
 *  `turnover-saved-state`, version 1): the rate request, form fields by
 *  element id, and per-section extras. Each old field is mapped to its
 *  place in the document; nothing else is read. */
const V1_FIELD_PATHS = {
  'dose-model': 'dose.model', 'dose-fix-top': 'dose.fix_top', 'dose-top': 'dose.top', 'dose-fix-bottom': 'dose.fix_bottom',
  'dose-bottom': 'dose.bottom', 'dose-enzyme': 'dose.enzyme', 'dose-cp-mechanism': 'dose.cp_mechanism',
  'dose-cp-substrate': 'dose.cp_substrate', 'dose-cp-km': 'dose.cp_km', 'dose-cp-km-se': 'dose.cp_km_se',
  'traces-input': 'traces.text', 'layout-input': 'traces.layout', 'tr-conversion': 'traces.conversion', 'tr-preset': 'traces.preset',
  'tr-epsilon': 'traces.epsilon', 'tr-path': 'traces.path', 'tr-volume': 'traces.volume', 'tr-diameter': 'traces.diameter',
  'tr-direction': 'traces.direction', 'tr-limit': 'traces.limit', 'tr-max-conversion': 'traces.max_conversion', 'tr-standard': 'traces.standard',
};

export function migrateSavedState(saved, classify = null) {
  if (saved.version !== 1) return { error: `it is a saved page of an unknown version (${JSON.stringify(saved.version ?? null)})` };
  const r = saved.request;
  if (!r || typeof r !== 'object' || typeof r.text !== 'string') return { error: 'the saved page holds no rate table' };
  let doc = blankDocument(`Saved page of ${String(saved.saved_at ?? '').slice(0, 10) || 'an earlier version'}`);
  const notes = [];
  const text = (v) => (v === null || v === undefined ? '' : String(v));
  doc = setPath(doc, 'rates.text', r.text);
  doc = setPath(doc, 'rates.substrate_unit', text(r.substrate_unit));
  doc = setPath(doc, 'rates.rate_unit', text(r.rate_unit));
  if (r.enzyme === -1) notes.push('the saved [E]t could not be read by the version that saved it; enter it again');
  else doc = setPath(doc, 'rates.enzyme', text(r.enzyme));
  if (r.enzyme_unit) doc = setPath(doc, 'rates.enzyme_unit', String(r.enzyme_unit));
  if (r.weighting) {
    // 0.1 computed relative and Poisson weights from the measured rates;
    // they are kept so that the saved numbers come back, with a note.
    const legacy = { relative: 'relative_measured', poisson: 'poisson_measured' }[r.weighting];
    doc = setPath(doc, 'rates.weighting', legacy ?? String(r.weighting));
    if (legacy) notes.push(`it weighted by the measured rates (${r.weighting === 'relative' ? '1/v²' : '1/v'}), which is kept so that its numbers come back; weights from the fitted curve, now the default for that choice, are less biased when rates are noisy`);
  }
  if (r.interval_method) doc = setPath(doc, 'rates.interval_method', String(r.interval_method));
  if (r.bootstrap) {
    doc = setPath(doc, 'rates.resamples', text(r.bootstrap.resamples ?? 2000));
    doc = setPath(doc, 'rates.seed', text(r.bootstrap.seed ?? 1));
    doc = setPath(doc, 'rates.resample_by', r.bootstrap.scheme === 'case' ? 'case' : 'residual');
  }
  doc = setPath(doc, 'rates.excluded_lines', (r.excluded_lines ?? []).filter((x) => Number.isInteger(x) && x > 0));
  for (const [id, field] of Object.entries(saved.fields ?? {})) {
    const path = V1_FIELD_PATHS[id];
    if (!path || field === null || typeof field !== 'object') continue;
    doc = setPath(doc, path, 'checked' in field ? Boolean(field.checked) : text(field.value));
  }
  // That version had one input for rate, inhibitor-series and
  // dose-response tables; each now has its own. `classify` (the page's
  // reading of the table) says which section the saved table belongs to.
  const sections = saved.sections ?? {};
  const home = classify ? classify(r.text) : 'rates';
  if (home === 'inhibition' || home === 'dose') {
    doc = setPath(setPath(doc, `${home}.text`, r.text), 'rates.text', '');
    doc = setPath(doc, 'rates.excluded_lines', []);
    if (home === 'inhibition') doc = setPath(doc, 'inhibition.rate_unit', text(r.rate_unit));
  }
  if (home === 'inhibition' && sections.inhibition && sections.inhibition.text === r.text) {
    doc = setPath(doc, 'inhibition.excluded_lines', (sections.inhibition.lines ?? []).filter(Number.isInteger));
    doc = setPath(doc, 'inhibition.excluded_cells', (sections.inhibition.cells ?? []).map(String));
  }
  if (home === 'dose' && sections.dose && sections.dose.text === r.text) doc = setPath(doc, 'dose.excluded_lines', (sections.dose.lines ?? []).filter(Number.isInteger));
  if (sections.traces) {
    const windows = {};
    for (const [name, w] of sections.traces.windows ?? []) {
      if (w && Number.isFinite(w.start) && Number.isFinite(w.end)) windows[name] = [Math.min(w.start, w.end), Math.max(w.start, w.end)];
    }
    doc = setPath(doc, 'traces.windows', windows);
    doc = setPath(doc, 'traces.excluded', (sections.traces.excluded ?? []).map(String));
  }
  // Demo content the old page carried along is marked as such, so that it
  // leaves when the person's next table arrives.
  const demo = [];
  for (const section of TABLE_SECTIONS) if (doc[section].text.startsWith('# Demo (invented data)')) demo.push(section);
  if (doc.traces.text.startsWith('Demo plate (simulated)')) demo.push('traces');
  doc = { ...doc, demo, notes: notes.length ? `Opened from a page saved by Turnover 0.1: ${notes.join('; ')}.` : '' };
  // Check the result against the current shape, as for any document.
  const checked = validateDocument(doc);
  return checked.error ? { error: `the saved page could not be read: ${checked.error}` } : { document: checked.document, migrated: true };
}

/** Reads a document out of text: JSON, or a page saved by Turnover (the
 *  JSON block inside it). */
export function readDocumentText(text, options = {}) {
  let json = text;
  const embedded = /<script type="application\/json" id="turnover-saved-state">([\s\S]*?)<\/script>/.exec(text);
  if (embedded) json = embedded[1];
  let value;
  try {
    value = JSON.parse(json);
  } catch (error) {
    return { error: `it is not valid JSON (${error.message})` };
  }
  if (value === null && embedded) return { error: 'the page holds no saved analysis' };
  return validateDocument(value, options);
}

// ------------------------------------------------------------ storage

const KEY_INDEX = 'turnover.analyses';
const KEY_CURRENT = 'turnover.current';
const keyOf = (id) => `turnover.analysis.${id}`;

/** The analyses kept in this browser. Any storage failure is reported
 *  once through `onProblem` and the page keeps working without it. */
export class Shelf {
  constructor(onProblem) {
    this.onProblem = onProblem;
    this.failed = false;
    try {
      this.storage = window.localStorage;
      this.storage.getItem(KEY_INDEX);
    } catch (error) {
      this.storage = null;
      this.fail(error);
    }
  }

  fail(error) {
    if (this.failed) return;
    this.failed = true;
    const why = error?.name === 'QuotaExceededError' ? 'its storage is full' : `its storage is not available (${error?.message ?? error})`;
    this.onProblem(`This browser is not keeping your work: ${why}. Everything still works; use "Save page with data" or "Export session file" to keep this analysis.`);
  }

  index() {
    if (!this.storage) return [];
    try {
      const list = JSON.parse(this.storage.getItem(KEY_INDEX) ?? '[]');
      return Array.isArray(list) ? list.filter((e) => e && typeof e.id === 'string') : [];
    } catch {
      return [];
    }
  }

  currentId() {
    try {
      return this.storage?.getItem(KEY_CURRENT) ?? null;
    } catch {
      return null;
    }
  }

  load(id) {
    if (!this.storage) return null;
    const text = this.storage.getItem(keyOf(id));
    return text === null ? null : { text, updated: this.index().find((e) => e.id === id)?.updated ?? null };
  }

  put(doc) {
    if (!this.storage) return;
    try {
      const updated = new Date().toISOString();
      this.storage.setItem(keyOf(doc.id), JSON.stringify(doc));
      const index = this.index().filter((e) => e.id !== doc.id);
      index.unshift({ id: doc.id, name: doc.name, updated });
      this.storage.setItem(KEY_INDEX, JSON.stringify(index));
      this.storage.setItem(KEY_CURRENT, doc.id);
      if (this.failed && this.recovered) this.recovered();
    } catch (error) {
      this.fail(error);
    }
  }

  remove(id) {
    if (!this.storage) return;
    try {
      this.storage.removeItem(keyOf(id));
      this.storage.setItem(KEY_INDEX, JSON.stringify(this.index().filter((e) => e.id !== id)));
    } catch (error) {
      this.fail(error);
    }
  }
}

// ------------------------------------------------------------ share links

export const LINK_LIMIT = 32000;

function toBase64Url(bytes) {
  let binary = '';
  for (let i = 0; i < bytes.length; i += 0x8000) binary += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(binary).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
}

function fromBase64Url(text) {
  const binary = atob(text.replace(/-/g, '+').replace(/_/g, '/'));
  const bytes = new Uint8Array(binary.length);
  for (let i = 0; i < binary.length; i++) bytes[i] = binary.charCodeAt(i);
  return bytes;
}

/** The document compressed into a URL fragment ("#doc=..."). */
export async function linkFragment(doc) {
  const stream = new Blob([JSON.stringify(doc)]).stream().pipeThrough(new CompressionStream('deflate-raw'));
  const bytes = new Uint8Array(await new Response(stream).arrayBuffer());
  return `#doc=${toBase64Url(bytes)}`;
}

/** The document text from a fragment made by `linkFragment`. */
export async function fragmentText(fragment) {
  const bytes = fromBase64Url(fragment.replace(/^#doc=/, ''));
  const stream = new Blob([bytes]).stream().pipeThrough(new DecompressionStream('deflate-raw'));
  return new Response(stream).text();
}

// ------------------------------------------------------------ the workspace

const HISTORY_LIMIT = 200;
// Typing in one field within this many milliseconds is one undo step.
const COALESCE_MS = 1500;

/** The current document, its undo and redo lists, autosave and the views
 *  that render from it. One per page. */
export class Workspace {
  constructor({ shelf, onChange }) {
    this.shelf = shelf;
    this.onChange = onChange;
    this.doc = null;
    this.past = [];
    this.future = [];
    this.views = [];
  }

  /** Opens `doc` with no history (page start). */
  start(doc) {
    this.doc = doc;
    this.past = [];
    this.future = [];
    this.shelf.put(doc);
    this.render(null);
  }

  /** Registers `view(doc, previous)`; called after every change. */
  view(render) {
    this.views.push(render);
    if (this.doc) render(this.doc, null);
  }

  render(previous) {
    for (const render of this.views) {
      try {
        render(this.doc, previous);
      } catch (error) {
        console.warn(`a view failed to render: ${error?.stack ?? error}`);
      }
    }
    this.onChange?.(this);
  }

  /** Applies one named edit. `coalesce`: a key; consecutive edits with
   *  the same key in quick succession (typing) make one undo step. */
  dispatch(edit, { coalesce = null } = {}) {
    const before = this.doc;
    const after = applyEdit(before, edit);
    if (after === before) return;
    const now = Date.now();
    const top = this.past[this.past.length - 1];
    if (coalesce && top && top.coalesce === coalesce && now - top.at < COALESCE_MS && top.after === before) {
      top.after = after;
      top.at = now;
    } else {
      const entry = { type: edit.type, before, after, coalesce, at: now };
      // Whole-document edits: the document left behind stays on the shelf
      // (it was saved); one created here is removed again by Undo, and a
      // deleted one is put back by Undo (autosave of `before`).
      if (edit.type === 'delete analysis') entry.removeOnRedo = before.id;
      if (['load demo', 'new analysis', 'duplicate analysis', 'import document'].includes(edit.type) && after.id !== before.id) entry.removeOnUndo = after.id;
      this.past.push(entry);
      if (this.past.length > HISTORY_LIMIT) this.past.shift();
    }
    this.future = [];
    if (edit.type === 'delete analysis') this.shelf.remove(before.id);
    this.doc = after;
    this.shelf.put(after);
    this.render(before);
  }

  undo() {
    const entry = this.past.pop();
    if (!entry) return false;
    this.future.push(entry);
    if (entry.removeOnUndo) this.shelf.remove(entry.removeOnUndo);
    const previous = this.doc;
    this.doc = entry.before;
    this.shelf.put(this.doc);
    this.render(previous);
    return true;
  }

  redo() {
    const entry = this.future.pop();
    if (!entry) return false;
    this.past.push(entry);
    if (entry.removeOnRedo) this.shelf.remove(entry.removeOnRedo);
    const previous = this.doc;
    this.doc = entry.after;
    this.shelf.put(this.doc);
    this.render(previous);
    return true;
  }

  /** What Undo and Redo would do, in words. */
  undoLabel() {
    const entry = this.past[this.past.length - 1];
    return entry ? EDIT_NAMES[entry.type] ?? entry.type : null;
  }

  redoLabel() {
    const entry = this.future[this.future.length - 1];
    return entry ? EDIT_NAMES[entry.type] ?? entry.type : null;
  }
}

export { get as getPath, DEFAULTS, UNTITLED, clone };

// The page's other modules are inline scripts that cannot import this one;
// they find it here.
if (typeof window !== 'undefined') {
  window.turnover = window.turnover ?? {};
  window.turnoverStore = {
    SCHEMA, FORMAT, LINK_LIMIT, TABLE_SECTIONS, blankDocument, applyEdit, validateDocument, readDocumentText, migrateSavedState,
    Shelf, Workspace, linkFragment, fragmentText, newId, getPath: get, clone, UNTITLED,
  };
}
