// Turnover page: owns the DOM, events and layout. Every number shown comes
// from the WebAssembly core (turnover-wasm); this file only presents it.
// It makes no network request of any kind.

/* global wasm_bindgen */

// The page as it was delivered, captured before anything changes, so that
// "Save page with data" can write a copy of the very same file.
const PRISTINE_PAGE = '<!DOCTYPE html>\n' + document.documentElement.outerHTML;

const PLOT_KINDS = ['direct', 'residuals', 'lineweaver-burk', 'eadie-hofstee', 'hanes-woolf', 'normal-quantile', 'direct-linear'];

// Invented demo scenario (not measured data): a fictional hydrolase "Hyd-3"
// from an imaginary pond isolate, assayed at 30 °C with 25 nM enzyme;
// duplicate rates with about 4% noise around Km 0.82 mM, Vmax 12.4 µM/min.
const DEMO_TABLE = `# Demo (invented data): hydrolase Hyd-3, 30 °C, pH 7.5, [E]t = 25 nM
# duplicate initial rates at eight substrate concentrations
[S] (mM)\tv (µM/min)
0.05\t0.702
0.05\t0.722
0.1\t1.353
0.1\t1.232
0.2\t2.197
0.2\t2.509
0.4\t4.151
0.4\t3.759
0.8\t5.933
0.8\t6.121
1.6\t7.877
1.6\t8.517
3.2\t9.954
3.2\t10.128
6.4\t11.020
6.4\t10.738
`;

const $ = (id) => document.getElementById(id);

const state = {
  excluded: new Set(),
  // True while the [E]t field holds the demo's value, so that pasting
  // one's own data does not silently reuse the demo enzyme concentration.
  enzymeFromDemo: false,
  result: null,
  positions: {},
  error: null,
};

let workbench = null;
// The standing caution, as the core words it (the rate result carries it).
const CAUTION_TEXT = () => state.result?.caution ?? $('caution').textContent;
// The saved state this page was opened with, if any.
let openedState = null;
// The WebAssembly bytes as unpacked, kept for www/traces.js, which hands
// them to its Web Worker. Null when the core was loaded from a file.
let wasmBinary = null;

async function startWasm() {
  const holder = $('turnover-wasm');
  if (holder) {
    let binary = Uint8Array.from(atob(holder.textContent.trim()), (c) => c.charCodeAt(0));
    if (holder.dataset.encoding === 'gzip') {
      if (typeof DecompressionStream === 'undefined') {
        throw new Error('this browser is too old to unpack the page (it lacks DecompressionStream); use a current Chrome, Edge, Firefox or Safari');
      }
      const stream = new Blob([binary]).stream().pipeThrough(new DecompressionStream('gzip'));
      binary = new Uint8Array(await new Response(stream).arrayBuffer());
    }
    wasm_bindgen.initSync({ module: binary });
    wasmBinary = binary;
    return;
  }
  // Development only: served from a folder next to target/pkg.
  return wasm_bindgen({ module_or_path: '../target/pkg/turnover_wasm_bg.wasm' });
}

function request() {
  const enzymeText = $('enzyme').value.trim().replace(',', '.');
  const enzyme = enzymeText === '' ? null : Number(enzymeText);
  return {
    text: $('data-input').value,
    model: 'mm',
    substrate_unit: $('substrate-unit').value || null,
    rate_unit: $('rate-unit').value || null,
    enzyme: enzyme === null || Number.isNaN(enzyme) ? (enzymeText === '' ? null : -1) : enzyme,
    enzyme_unit: $('enzyme-unit').value,
    excluded_lines: [...state.excluded],
    weighting: $('weighting').value,
    interval_method: $('interval-method').value,
    bootstrap: {
      resamples: wholeNumber($('resamples').value, 2000),
      seed: wholeNumber($('seed').value, 1),
      scheme: $('resample-by').value,
    },
  };
}

function wholeNumber(text, fallback) {
  const value = Number(String(text).trim());
  return Number.isInteger(value) && value >= 0 ? value : fallback;
}

const METHOD_TEXT = {
  asymptotic: 'intervals estimate ± t(0.975, n − p)·SE',
  profile: 'profile-likelihood intervals (each constant held fixed in turn, the others refitted; F-based cut-off), which follow the curvature of the model and may be asymmetric',
  bootstrap: 'bootstrap percentile intervals',
};
const WEIGHT_TEXT = {
  uniform: 'equal weights',
  relative: 'weights 1/v² (constant relative error)',
  poisson: 'weights 1/v',
  sd: 'weights 1/sd² from the sd column',
  weighted: 'weights',
};

function formatNumber(value, digits = 4) {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  if (value === 0) return '0';
  const magnitude = Math.floor(Math.log10(Math.abs(value)));
  if (magnitude >= 6 || magnitude <= -4) {
    const [mantissa, exponent] = value.toExponential(digits - 1).split('e');
    return `${mantissa}×10${superscript(Number(exponent))}`;
  }
  const text = value.toPrecision(digits);
  if (!text.includes('e')) return text;
  const [mantissa, exponent] = text.split('e');
  return `${mantissa}×10${superscript(Number(exponent))}`;
}

// Interval ends in the same style as the estimate: the same number of
// decimals, or the same power of ten, so a row reads as one.
function formatLike(reference, value) {
  if (value === null || value === undefined || !Number.isFinite(value)) return 'open';
  if (!Number.isFinite(reference) || reference === 0) return formatNumber(value, 4);
  const magnitude = Math.floor(Math.log10(Math.abs(reference)));
  if (magnitude >= 6 || magnitude <= -4) {
    const scaled = value / 10 ** magnitude;
    return `${scaled.toFixed(3)}×10${superscript(magnitude)}`;
  }
  const decimals = Math.max(0, 3 - magnitude);
  return value.toFixed(decimals);
}

function superscript(text) {
  const map = { '-': '⁻', 0: '⁰', 1: '¹', 2: '²', 3: '³', 4: '⁴', 5: '⁵', 6: '⁶', 7: '⁷', 8: '⁸', 9: '⁹' };
  return [...String(text)].map((c) => map[c] ?? c).join('');
}

function element(tag, attributes = {}, text) {
  const node = document.createElement(tag);
  for (const [key, value] of Object.entries(attributes)) node.setAttribute(key, value);
  if (text !== undefined) node.textContent = text;
  return node;
}

function showProblems(problems, fatal) {
  const box = $('input-problems');
  box.replaceChildren();
  if (!problems.length && !fatal) return;
  if (fatal) {
    box.append(element('h4', {}, 'No fit could be made'), element('p', {}, fatal));
  }
  if (problems.length) {
    box.append(element('h4', {}, `${problems.length} problem${problems.length === 1 ? '' : 's'} in the table (these lines were not used)`));
    const list = element('ul');
    for (const p of problems) {
      const where = p.column ? `line ${p.line}, column ${p.column}` : `line ${p.line}`;
      list.append(element('li', { 'data-line': p.line }, `${where}: ${p.message}`));
    }
    box.append(list);
  }
}

function showResult(result) {
  const fit = result.fit;
  const status = $('status');
  const warned = fit.warnings.length > 0 || result.problems.length > 0;
  status.dataset.state = fit.converged ? (warned ? 'warn' : 'ok') : 'error';
  status.textContent = fit.converged
    ? `Converged after ${fit.iterations} iterations on ${fit.n} points${warned ? ': read the warnings below' : ''}.`
    : `The fit ${fit.termination_text}. The numbers below are not a least-squares solution.`;
  $('equation').textContent = fit.equation;
  $('ci-heading').textContent = `${Math.round(fit.confidence_level * 100)}% interval`;

  const body = $('parameters').tBodies[0];
  body.replaceChildren();
  for (const p of fit.parameters) {
    const row = element('tr', { 'data-param': p.name, 'data-value': String(p.value) });
    if (p.std_error !== null) row.dataset.se = String(p.std_error);
    if (p.ci_low !== null) row.dataset.ciLow = String(p.ci_low);
    if (p.ci_high !== null) row.dataset.ciHigh = String(p.ci_high);
    if (p.derived) row.classList.add('derived');
    row.append(
      element('td', {}, p.name),
      element('td', { class: 'num value' }, formatNumber(p.value, 4)),
      element('td', { class: 'num se' }, formatNumber(p.std_error, 3)),
      element('td', { class: 'num ci', title: `interval: ${p.ci_method}` },
        p.ci_low === null && p.ci_high === null ? '—' : `${formatLike(p.value, p.ci_low)} to ${formatLike(p.value, p.ci_high)}`),
      element('td', { class: 'unit' }, p.unit ?? '(no unit given)'),
    );
    body.append(row);
  }
  if (fit.parameters.some((p) => p.derived)) {
    const note = element('tr', { class: 'footnote' });
    note.append(element('td', { colspan: '5', class: 'hint' }, '† computed from Vmax, Km and [E]t ([E]t taken as exact); standard error by the delta method with the full covariance; interval by the method chosen (delta method when asymptotic; kcat/Km profiled by refitting with Vmax/Km as a parameter).'));
    body.append(note);
  }

  const stats = $('fit-stats');
  stats.replaceChildren();
  const correlation = fit.correlation?.[0]?.[1];
  const entries = [
    ['n', 'points used', fit.n, String(fit.n)],
    ['dof', 'degrees of freedom', fit.dof, String(fit.dof)],
    ['sigma', 'residual SD', fit.sigma, formatNumber(fit.sigma, 4)],
    ['rss', 'residual SS', fit.rss, formatNumber(fit.rss, 4)],
    ['r_squared', 'R²', fit.r_squared, fit.r_squared === null ? '—' : fit.r_squared.toFixed(4)],
    ['aicc', 'AICc', fit.aicc, fit.aicc === null ? '—' : fit.aicc.toFixed(2)],
    ['correlation', 'corr(Vmax, Km)', correlation, correlation === null || correlation === undefined ? '—' : correlation.toFixed(3)],
    ['iterations', 'iterations', fit.iterations, String(fit.iterations)],
  ];
  for (const [key, label, value, text] of entries) {
    const item = element('div', { 'data-stat': key, 'data-value': value === null || value === undefined ? '' : String(value) });
    item.append(element('dt', {}, label), element('dd', {}, text));
    stats.append(item);
  }

  const method = fit.parameters[0]?.ci_method ?? 'asymptotic';
  let methodText = `Nonlinear least squares (Levenberg-Marquardt) fitted directly to v with ${WEIGHT_TEXT[fit.weighting] ?? fit.weighting}; standard errors from the asymptotic covariance; ${METHOD_TEXT[method] ?? method}.`;
  if (result.bootstrap) {
    const b = result.bootstrap;
    methodText += ` Bootstrap: ${b.resamples} resamples of the ${b.scheme === 'case' ? 'rows' : 'residuals'}, seed ${b.seed}${b.failures ? `, ${b.failures} refits left out` : ''}.`;
  }
  $('method').textContent = methodText;
  showChecks(result);

  const warnings = $('warnings');
  warnings.replaceChildren(...fit.warnings.map((w) => element('li', {}, w)));
  $('notes').replaceChildren(...result.notes.map((n) => element('li', {}, n)));
  $('caution').textContent = result.caution;
  for (const plot of result.plots) {
    const note = document.querySelector(`[data-note-for="${plot.kind}"]`);
    if (note) note.textContent = plot.note;
  }
}

function showChecks(result) {
  const list = $('diagnostics');
  list.replaceChildren();
  const add = (term, text) => list.append(element('dt', {}, term), element('dd', {}, text));
  const d = result.diagnostics;
  if (d.runs) {
    add('Runs of residual signs', `${d.runs.runs} runs (${d.runs.expected.toFixed(1)} expected for random signs); P(this few or fewer) = ${d.runs.p_too_few.toFixed(3)}`);
  } else {
    add('Runs of residual signs', 'not available (all residuals have one sign)');
  }
  if (d.lack_of_fit) {
    const l = d.lack_of_fit;
    add('Lack of fit vs replicates', `F = ${l.f.toFixed(2)} on ${l.lack_of_fit_dof} and ${l.pure_error_dof} df, P = ${l.p_value.toFixed(3)}`);
  } else {
    add('Lack of fit vs replicates', 'needs replicate [S] values and more distinct [S] than parameters');
  }
  const flagged = result.points.filter((p) => p.flagged).map((p) => `line ${p.line}`);
  add('Large studentised residuals (|r| > 2.5)', flagged.length ? flagged.join(', ') : 'none');
  const robust = result.direct_linear;
  const units = result.units;
  add('Direct linear plot medians', robust.km === null || robust.vmax === null
    ? (robust.intersections === 0 && result.points.length > 1000 ? 'not computed for more than 1,000 points' : 'not available')
    : `Km ${formatNumber(robust.km, 4)} ${units.substrate ?? ''}, Vmax ${formatNumber(robust.vmax, 4)} ${units.rate ?? ''} (from ${robust.intersections} intersections)`);

  const table = $('correlation');
  table.replaceChildren();
  const fitted = result.fit.parameters.filter((p) => !p.derived);
  table.append(element('caption', {}, 'Correlation of the fitted constants'));
  const head = element('tr');
  head.append(element('th'), ...fitted.map((p) => element('th', {}, p.name)));
  table.append(head);
  fitted.forEach((p, i) => {
    const row = element('tr');
    row.append(element('th', {}, p.name), ...fitted.map((_, j) => {
      const r = result.fit.correlation[i]?.[j];
      return element('td', {}, r === null || r === undefined ? '—' : r.toFixed(3));
    }));
    table.append(row);
  });
}

// Rate laws are compared only when the panel is open: it costs three fits.
function showRateLaws() {
  const body = $('rate-law-ranking').tBodies[0];
  const verdict = $('rate-law-verdict');
  body.replaceChildren();
  verdict.textContent = '';
  if (!$('rate-laws').open || !state.result) return;
  let view;
  try {
    view = workbench.compare_rate_laws(request());
  } catch (error) {
    verdict.textContent = `No comparison: ${error?.message ?? error}`;
    return;
  }
  const tests = view.comparison.f_tests;
  for (const m of view.comparison.models) {
    const fit = view.fits.find((f) => f.model === m.model);
    const test = tests.find((t) => t.general === m.model);
    const constants = (fit?.parameters ?? []).filter((p) => !p.derived).map((p) => `${p.name} = ${formatNumber(p.value, 4)}`).join(', ');
    const row = element('tr', { 'data-model': m.model });
    row.append(
      element('td', {}, m.model),
      element('td', {}, constants),
      element('td', {}, formatNumber(m.rss, 4)),
      element('td', {}, m.aicc === null ? '—' : m.aicc.toFixed(2)),
      element('td', {}, m.akaike_weight === null ? '—' : m.akaike_weight.toFixed(3)),
      element('td', {}, test ? `F = ${test.f.toFixed(2)}, p = ${test.p_value < 1e-4 ? test.p_value.toExponential(1) : test.p_value.toFixed(4)}` : '—'),
    );
    body.append(row);
  }
  verdict.textContent = view.comparison.verdict;
}

function clearResult(message) {
  $('status').dataset.state = 'error';
  $('status').textContent = message;
  $('parameters').tBodies[0].replaceChildren();
  $('fit-stats').replaceChildren();
  $('warnings').replaceChildren();
  $('diagnostics').replaceChildren();
  $('correlation').replaceChildren();
  for (const kind of PLOT_KINDS) {
    const canvas = $(`plot-${kind}`);
    const context = canvas.getContext('2d');
    context.fillStyle = '#ffffff';
    context.fillRect(0, 0, canvas.width, canvas.height);
    context.fillStyle = '#5f6b70';
    context.font = '14px sans-serif';
    context.fillText('No fit to draw', 20, 30);
    state.positions[kind] = [];
  }
}

function drawPlots() {
  for (const kind of PLOT_KINDS) {
    try {
      state.positions[kind] = workbench.draw(`plot-${kind}`, kind);
    } catch (error) {
      state.positions[kind] = [];
      console.warn(`plot ${kind}: ${error.message ?? error}`);
    }
  }
}

// Other page modules (inhibition.js) ask to hear of every analysis; each
// hook receives the request that was analysed.
const analysedHooks = [];
function notifyAnalysed() {
  const sent = request();
  for (const hook of analysedHooks) {
    try {
      hook(sent);
    } catch (error) {
      console.warn(`analysis hook: ${error?.message ?? error}`);
    }
  }
}

function analyse() {
  try {
    analyseRates();
  } finally {
    notifyAnalysed();
  }
}

function analyseRates() {
  let result;
  try {
    result = workbench.analyse(request());
  } catch (error) {
    const message = error?.message ?? String(error);
    state.result = null;
    state.error = message;
    showProblems([], message);
    $('notes').replaceChildren();
    clearResult(`No fit: ${message}`);
    return;
  }
  state.result = result;
  state.error = null;
  showProblems(result.problems, null);
  showResult(result);
  drawPlots();
  showRateLaws();
}

let pending = null;
function analyseSoon() {
  clearTimeout(pending);
  pending = setTimeout(analyse, 350);
}

function toggleAt(canvas, event) {
  if (!state.result) return;
  const kind = canvas.dataset.kind;
  const scaleX = canvas.width / canvas.clientWidth;
  const scaleY = canvas.height / canvas.clientHeight;
  const box = canvas.getBoundingClientRect();
  const x = (event.clientX - box.left) * scaleX;
  const y = (event.clientY - box.top) * scaleY;
  let best = null;
  let bestDistance = 10 * scaleX;
  for (const p of state.positions[kind] ?? []) {
    const distance = Math.hypot(p.x - x, p.y - y);
    if (distance < bestDistance) {
      best = p;
      bestDistance = distance;
    }
  }
  if (!best) return;
  const line = state.result.points[best.row].line;
  if (state.excluded.has(line)) state.excluded.delete(line);
  else state.excluded.add(line);
  analyse();
}

/** One fit record as tab-separated lines: a header, one row per constant,
 *  the fit statistics and warnings. Shared by every section's copy. */
function fitAsText(title, fit) {
  const lines = [
    `# ${title}: ${fit.equation}`,
    `# weighting: ${fit.weighting}; ${Math.round(fit.confidence_level * 100)}% intervals`,
    ['constant', 'estimate', 'std_error', 'ci_low', 'ci_high', 'ci_method', 'unit'].join('\t'),
  ];
  for (const p of fit.parameters) {
    lines.push([p.name, p.value, p.std_error ?? '', p.ci_low ?? '', p.ci_high ?? '', p.ci_method, p.unit ?? ''].join('\t'));
  }
  lines.push(`# n = ${fit.n}, dof = ${fit.dof}, residual SD = ${fit.sigma}, RSS = ${fit.rss}, R² = ${fit.r_squared}, AICc = ${fit.aicc}, converged = ${fit.converged}`);
  for (const w of fit.warnings) lines.push(`# warning: ${w}`);
  return lines;
}

function resultsAsText() {
  const lines = [`# Turnover ${wasm_bindgen.version()} · ${new Date().toISOString()}`];
  if (state.result) {
    lines.push(...fitAsText('Rate fit', state.result.fit));
    const excluded = state.result.points.filter((p) => p.excluded).map((p) => p.line);
    if (excluded.length) lines.push(`# left out: input line(s) ${excluded.join(', ')}`);
  }
  // Other sections add their own results (inhibitor series, dose-response).
  for (const [name, keeper] of stateKeepers) {
    const extra = keeper.text?.();
    if (extra && extra.length) lines.push('', `# ${name}`, ...extra);
  }
  lines.push('', `# ${CAUTION_TEXT()}`);
  return lines.join('\n') + '\n';
}

function download(name, type, content) {
  const url = URL.createObjectURL(new Blob([content], { type }));
  const link = element('a', { href: url, download: name });
  document.body.append(link);
  link.click();
  link.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

// Form fields of every section (time courses, dose-response, ...) are kept
// by id, so a saved page reopens with each section as it was. The rate
// panel's own fields travel in `request`; file choosers are never saved.
const SECTION_FIELDS = 'main input[id], main select[id], main textarea[id]';
const RATE_PANEL = new Set(['data-input', 'substrate-unit', 'rate-unit', 'enzyme', 'enzyme-unit', 'weighting',
  'interval-method', 'resamples', 'seed', 'resample-by', 'file-input']);

function collectFields() {
  const fields = {};
  for (const el of document.querySelectorAll(SECTION_FIELDS)) {
    if (RATE_PANEL.has(el.id) || el.type === 'file') continue;
    fields[el.id] = el.type === 'checkbox' || el.type === 'radio' ? { checked: el.checked } : { value: el.value };
  }
  return fields;
}

function restoreFields(fields) {
  for (const [id, saved] of Object.entries(fields ?? {})) {
    const el = document.getElementById(id);
    if (!el || el.type === 'file') continue;
    if ('checked' in saved) el.checked = Boolean(saved.checked);
    else el.value = saved.value;
  }
}

// Modules that keep choices beyond form fields (a trace's window, say)
// register here to have them saved and restored.
const stateKeepers = new Map();

function savedState() {
  const sections = {};
  for (const [name, keeper] of stateKeepers) {
    try {
      sections[name] = keeper.save();
    } catch (error) {
      console.warn(`could not save the ${name} section: ${error?.message ?? error}`);
    }
  }
  return {
    format: 'turnover-saved-state',
    version: 1,
    fields: collectFields(),
    sections,
    saved_at: new Date().toISOString(),
    turnover_version: wasm_bindgen.version(),
    request: request(),
    // The results as they were when saved, for reading without refitting.
    results: state.result ? { fit: state.result.fit, points: state.result.points, problems: state.result.problems } : null,
  };
}

function savePage() {
  const json = JSON.stringify(savedState()).replace(/</g, '\\u003c');
  const marker = /(<script type="application\/json" id="turnover-saved-state">)[\s\S]*?(<\/script>)/;
  const page = PRISTINE_PAGE.replace(marker, (_, open, close) => open + json + close);
  const stamp = new Date().toISOString().slice(0, 16).replace(/[:T]/g, '-');
  download(`turnover-${stamp}.html`, 'text/html', page);
}

function restore(saved) {
  const r = saved.request ?? {};
  $('data-input').value = r.text ?? '';
  $('substrate-unit').value = r.substrate_unit ?? '';
  $('rate-unit').value = r.rate_unit ?? '';
  $('enzyme').value = r.enzyme ?? '';
  if (r.enzyme_unit) $('enzyme-unit').value = r.enzyme_unit;
  state.excluded = new Set(r.excluded_lines ?? []);
  if (r.weighting) $('weighting').value = r.weighting;
  if (r.interval_method) $('interval-method').value = r.interval_method;
  if (r.bootstrap) {
    $('resamples').value = r.bootstrap.resamples ?? 2000;
    $('seed').value = r.bootstrap.seed ?? 1;
    $('resample-by').value = r.bootstrap.scheme ?? 'residual';
  }
  $('bootstrap-options').hidden = $('interval-method').value !== 'bootstrap';
  $('saved-info').textContent = `opened a saved analysis from ${saved.saved_at}`;
}

function loadDemo() {
  $('data-input').value = DEMO_TABLE;
  $('substrate-unit').value = '';
  $('rate-unit').value = '';
  $('enzyme').value = '25';
  $('enzyme-unit').value = 'nM';
  state.enzymeFromDemo = true;
  state.excluded.clear();
}

// Called when the table is replaced by the user's own data.
function forgetDemoEnzyme() {
  if (state.enzymeFromDemo) {
    $('enzyme').value = '';
    state.enzymeFromDemo = false;
  }
}

function readFile(file) {
  const reader = new FileReader();
  reader.onload = () => {
    $('data-input').value = String(reader.result);
    forgetDemoEnzyme();
    state.excluded.clear();
    analyse();
  };
  reader.onerror = () => showProblems([], `Could not read the file ${file.name}.`);
  reader.readAsText(file);
}

function wire() {
  $('analyse').addEventListener('click', analyse);
  $('data-input').addEventListener('input', () => {
    if (!$('data-input').value.startsWith('# Demo (invented data)')) forgetDemoEnzyme();
    state.excluded.clear();
    analyseSoon();
  });
  $('data-input').addEventListener('paste', () => setTimeout(() => {
    if (!$('data-input').value.startsWith('# Demo (invented data)')) forgetDemoEnzyme();
  }, 0));
  for (const id of ['substrate-unit', 'rate-unit', 'enzyme-unit', 'weighting', 'resample-by']) $(id).addEventListener('change', analyse);
  $('interval-method').addEventListener('change', () => {
    $('bootstrap-options').hidden = $('interval-method').value !== 'bootstrap';
    analyse();
  });
  for (const id of ['resamples', 'seed']) $(id).addEventListener('input', analyseSoon);
  $('enzyme').addEventListener('input', () => {
    state.enzymeFromDemo = false;
    analyseSoon();
  });
  $('load-demo').addEventListener('click', () => {
    loadDemo();
    analyse();
  });
  $('include-all').addEventListener('click', () => {
    state.excluded.clear();
    analyse();
  });
  $('file-input').addEventListener('change', (event) => {
    const file = event.target.files?.[0];
    if (file) readFile(file);
    event.target.value = '';
  });
  const area = $('data-input');
  area.addEventListener('dragover', (event) => {
    event.preventDefault();
    area.classList.add('dragging');
  });
  area.addEventListener('dragleave', () => area.classList.remove('dragging'));
  area.addEventListener('drop', (event) => {
    event.preventDefault();
    area.classList.remove('dragging');
    const file = event.dataTransfer?.files?.[0];
    if (file) readFile(file);
  });
  for (const kind of PLOT_KINDS) {
    const canvas = $(`plot-${kind}`);
    canvas.addEventListener('click', (event) => toggleAt(canvas, event));
  }
  for (const button of document.querySelectorAll('button.svg')) {
    button.addEventListener('click', () => {
      if (!state.result) return;
      download(`turnover-${button.dataset.kind}.svg`, 'image/svg+xml', workbench.svg(button.dataset.kind, 640, 460));
    });
  }
  $('rate-laws').addEventListener('toggle', showRateLaws);
  $('save-page').addEventListener('click', savePage);
  $('copy-results').addEventListener('click', async () => {
    const text = resultsAsText();
    try {
      await navigator.clipboard.writeText(text);
      $('copy-results').textContent = 'Copied';
    } catch {
      download('turnover-results.tsv', 'text/tab-separated-values', text);
    }
    setTimeout(() => ($('copy-results').textContent = 'Copy results'), 1500);
  });
}

// For tests and for scripting from the browser console.
window.turnover = {
  lastResult: () => state.result,
  resultsText: () => resultsAsText(),
  lastError: () => state.error,
  pointPositions(kind) {
    const canvas = $(`plot-${kind}`);
    const sx = canvas.clientWidth / canvas.width;
    const sy = canvas.clientHeight / canvas.height;
    return (state.positions[kind] ?? []).map((p) => ({ row: p.row, x: p.x * sx, y: p.y * sy }));
  },
  analyse,
  onAnalysed: (hook) => analysedHooks.push(hook),
  // keepState(name, {save() -> JSON value, restore(value), text() -> lines}):
  // `restore` is called on opening a saved page, before the first analysis,
  // for modules registered by then; `saved(name)` serves those that start
  // later (the time-course section).
  keepState: (name, keeper) => stateKeepers.set(name, keeper),
  // Small helpers the other page modules share, so that every section
  // formats numbers and downloads files the same way.
  ui: {
    format: formatNumber,
    fitAsText,
    cell(tag, text, attributes = {}) {
      const node = document.createElement(tag);
      for (const [key, value] of Object.entries(attributes)) node.setAttribute(key, value);
      node.textContent = text;
      return node;
    },
    download,
  },
  saved: (name) => openedState?.sections?.[name],
  savedFields: () => openedState?.fields,
  wasmBinary: () => wasmBinary,
};

// Other page modules wait on this before calling into the core.
window.turnover.ready = startWasm()
  .then(() => {
    workbench = new wasm_bindgen.Workbench();
    $('version').textContent = wasm_bindgen.version();
    wire();
    let saved = null;
    try {
      saved = JSON.parse($('turnover-saved-state').textContent);
    } catch {
      saved = null;
    }
    if (saved && saved.format === 'turnover-saved-state') {
      openedState = saved;
      restore(saved);
      restoreFields(saved.fields);
      // Sections registered so far get their part back before the first
      // analysis reaches them.
      for (const [name, keeper] of stateKeepers) {
        if (saved.sections?.[name] !== undefined) keeper.restore?.(saved.sections[name]);
      }
    } else loadDemo();
    analyse();
    return wasm_bindgen;
  })
  .catch((error) => {
    $('status').dataset.state = 'error';
    $('status').textContent = `Turnover could not start its computing core: ${error?.message ?? error}`;
  });
