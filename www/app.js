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
  result: null,
  positions: {},
  error: null,
};

const store = window.turnoverStore;
let workspace = null;
let workbench = null;
// The standing caution, as the core words it (the rate result carries it).
const CAUTION_TEXT = () => state.result?.caution ?? $('caution').textContent;
// The WebAssembly bytes as unpacked, kept for www/traces.js, which hands
// them to its Web Worker. Null when the core was loaded from a file.
let wasmBinary = null;
// The same, compiled: a Web Worker given it starts without compiling again.
let wasmModule = null;

async function startWasm() {
  // The single-file page: www/unpack.js has been unpacking and compiling
  // the core since the parser reached it.
  if (window.turnoverUnpacked) {
    const { binary, module } = await window.turnoverUnpacked;
    wasm_bindgen.initSync({ module });
    wasmBinary = binary;
    wasmModule = module;
    return;
  }
  // Development only: served from a folder next to target/pkg.
  return wasm_bindgen({ module_or_path: '../target/pkg/turnover_wasm_bg.wasm' });
}

/** A number typed into a field, read by the core's rule for a lone number
 *  (`1,5` is 1.5; `1,000` is ambiguous and refused): `{value, problem}`,
 *  value null when the field is empty or unreadable. */
function readTyped(text) {
  const trimmed = String(text).trim();
  if (trimmed === '') return { value: null, problem: null };
  try {
    return { value: wasm_bindgen.readNumber(trimmed), problem: null };
  } catch (error) {
    const message = String(error?.message ?? error);
    // The core names the text itself when it says what it found.
    return { value: null, problem: message.includes(`'${trimmed}'`) ? message : `'${trimmed}': ${message}` };
  }
}

/** The same, for callers that only need the number: null when empty, NaN
 *  when it cannot be read. */
function typedNumber(text) {
  const { value, problem } = readTyped(text);
  return problem ? NaN : value;
}

/** The rate section's settings as the core's request, from the document
 *  alone; `problems` lists every field that could not be read as typed. */
function rateRequest(doc) {
  // Edits share unchanged parts, so one reading per version of `rates`
  // serves every section's key in a render.
  const cached = rateRequests.get(doc.rates);
  if (cached) return cached;
  const read = readRateRequest(doc);
  rateRequests.set(doc.rates, read);
  return read;
}
const rateRequests = new WeakMap();

/** What the rate result depends on, as text: kept per reading of the
 *  request, since writing out a 100,000-row table each time the page asks
 *  whether its result is current took milliseconds. */
function rateKey(doc) {
  const read = rateRequest(doc);
  let key = rateKeys.get(read);
  if (key === undefined) {
    key = JSON.stringify(read);
    rateKeys.set(read, key);
  }
  return key;
}
const rateKeys = new WeakMap();

function readRateRequest(doc) {
  const r = doc.rates;
  const problems = [];
  // [E]t may carry its unit (`25 nM`), read as the command line reads --enzyme.
  let enzyme = null;
  let enzymeUnit = r.enzyme_unit;
  if (r.enzyme.trim()) {
    try {
      const q = wasm_bindgen.readQuantity(r.enzyme);
      if (q.unit !== null && q.unit !== undefined && q.unit.replace('u', 'µ') !== r.enzyme_unit) {
        if (['M', 'mM', 'µM', 'uM', 'nM', 'pM'].includes(q.unit)) {
          problems.push(`[E]t: '${r.enzyme}' is in ${q.unit} but the unit menu beside it says ${r.enzyme_unit}; give the unit once (type the number alone, or choose ${q.unit} in the menu). kcat is not computed until then.`);
        } else {
          problems.push(`[E]t: '${r.enzyme}' has the unit '${q.unit}', which is not a molar concentration (M, mM, µM, nM or pM); kcat is not computed until then.`);
        }
      } else if (!(q.value > 0)) {
        problems.push(`[E]t: '${r.enzyme}' is not a positive concentration, so kcat and kcat/Km are not computed.`);
      } else {
        enzyme = q.value;
        if (q.unit) enzymeUnit = q.unit.replace('u', 'µ');
      }
    } catch (error) {
      problems.push(`[E]t: '${r.enzyme.trim()}': ${error?.message ?? error}. kcat and kcat/Km are not computed until it can be read.`);
    }
  }
  // Protein concentration (with the enzyme's molar mass, [E]t for kcat):
  // specific activity, from the core's protein rule.
  let protein = null;
  if (r.protein.trim()) {
    const { value, problem } = readTyped(r.protein);
    const mass = r.molar_mass.trim() ? readTyped(r.molar_mass) : { value: null, problem: null };
    if (problem || !(value > 0)) problems.push(`Protein: ${problem ?? `'${r.protein}' is not a positive concentration`}; specific activity is not computed until it can be read.`);
    else if (mass.problem || (mass.value !== null && !(mass.value > 0))) problems.push(`Molar mass: ${mass.problem ?? `'${r.molar_mass}' is not a positive molar mass`}; specific activity is not computed until it can be read.`);
    else if (mass.value !== null && enzyme !== null) problems.push('Give [E]t or the molar mass (which gives [E]t from the protein), not both; specific activity and kcat wait until one is removed.');
    else protein = { concentration: value, unit: r.protein_unit, molar_mass: mass.value, molar_mass_unit: mass.value === null ? null : r.molar_mass_unit };
  } else if (r.molar_mass.trim()) {
    // Alone it serves rates per mass of protein (kcat = Vmax × molar
    // mass); with rates per volume the core says it is not used.
    const mass = readTyped(r.molar_mass);
    if (mass.problem || !(mass.value > 0)) problems.push(`Molar mass: ${mass.problem ?? `'${r.molar_mass}' is not a positive molar mass`}; kcat is not computed until it can be read.`);
    else protein = { concentration: null, unit: r.protein_unit, molar_mass: mass.value, molar_mass_unit: r.molar_mass_unit };
  }
  const whole = (text, label) => {
    const { value, problem } = readTyped(text);
    if (problem || value === null || !Number.isInteger(value) || value < 0) {
      problems.push(`${label}: ${problem ?? `'${text}' is not a whole number`}.`);
      return null;
    }
    return value;
  };
  const bootstrap = r.interval_method === 'bootstrap';
  const resamples = bootstrap ? whole(r.resamples, 'Bootstrap resamples') : typedNumber(r.resamples);
  const seed = bootstrap ? whole(r.seed, 'Bootstrap seed') : typedNumber(r.seed);
  const request = {
    text: r.text,
    model: 'mm',
    substrate_unit: r.substrate_unit || null,
    rate_unit: r.rate_unit || null,
    enzyme,
    enzyme_unit: enzymeUnit,
    protein,
    rate_time: r.rate_time || null,
    excluded_lines: [...r.excluded_lines],
    // One replicate of a line that holds several (replicates in columns).
    excluded_cells: r.excluded_cells.map((key) => key.split(':').map(Number)),
    weighting: r.weighting,
    interval_method: r.interval_method,
    bootstrap: {
      resamples: Number.isInteger(resamples) && resamples >= 0 ? resamples : 2000,
      seed: Number.isInteger(seed) && seed >= 0 ? seed : 1,
      scheme: r.resample_by,
    },
  };
  // A bootstrap setting that cannot be read stops the fit rather than
  // being replaced quietly by a default.
  const blocking = bootstrap && problems.some((p) => p.startsWith('Bootstrap'));
  return { request, problems, blocking };
}

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

function superscript(text) {
  const map = { '-': '⁻', 0: '⁰', 1: '¹', 2: '²', 3: '³', 4: '⁴', 5: '⁵', 6: '⁶', 7: '⁷', 8: '⁸', 9: '⁹' };
  return [...String(text)].map((c) => map[c] ?? c).join('');
}

/** A constant by the core's one formatting rule: standard error to two
 *  significant figures, the estimate and its interval to the same decimal
 *  place, one power of ten for all of them outside 10⁻³–10⁵. */
function formatted(p) {
  const num = (x) => (x === null || x === undefined || !Number.isFinite(x) ? null : x);
  const interval = p.ci_low !== null || p.ci_high !== null;
  return wasm_bindgen.formatEstimate(p.value, num(p.std_error), interval ? num(p.ci_low) : undefined, interval ? num(p.ci_high) : undefined);
}

// What the core's flags on a constant mean, in a few words beside it.
const FLAG_WORDS = {
  not_determined: '(not determined by these data)',
  not_bounded_above: '(no upper limit from these data)',
  not_bounded_below: '(no lower limit from these data)',
  asymptotic_crosses_zero: '(asymptotic interval reaches below zero: see the profile interval)',
};

/** "value ± SE" by the same rule, for a sentence. */
function estimateText(value, se) {
  const num = (x) => (x === null || x === undefined || !Number.isFinite(x) ? null : x);
  return wasm_bindgen.formatEstimate(num(value), num(se)).text;
}

/** One constant as a table row: name, estimate, SE, interval, unit, with
 *  the full-precision numbers in data attributes. */
function parameterRow(p) {
  const row = element('tr', { 'data-param': p.name, 'data-value': String(p.value) });
  if (p.std_error !== null) row.dataset.se = String(p.std_error);
  if (p.ci_low !== null) row.dataset.ciLow = String(p.ci_low);
  if (p.ci_high !== null) row.dataset.ciHigh = String(p.ci_high);
  if (p.derived) row.classList.add('derived');
  const f = formatted(p);
  const end = (text) => text ?? 'open';
  const name = element('td', {}, p.name);
  if (p.flag) {
    row.dataset.flag = p.flag;
    name.append(element('span', { class: 'param-flag', title: 'See the warnings below' }, ` ${FLAG_WORDS[p.flag] ?? p.flag}`));
  }
  const value = element('td', { class: 'num value' }, f.value);
  // The small-sample bias (Box 1971), shown where it is worth a tenth of
  // the standard error (the command line's rule); the core withholds it
  // for flagged constants and where it is not below the SE.
  const corrected = p.value_bias_corrected;
  if (corrected !== null && corrected !== undefined && p.std_error && Math.abs(p.bias) > 0.1 * p.std_error) {
    row.dataset.biasCorrected = String(corrected);
    const text = wasm_bindgen.formatEstimate(corrected, p.std_error, undefined, undefined).value;
    value.append(element('span', { class: 'bias-corrected', title: 'The estimate less its small-sample bias, computed from the curvature of the model (Box 1971). Least-squares estimates from few points are slightly biased; the interval is that of the estimate.' }, `bias-corrected ${text}`));
  }
  row.append(
    name,
    value,
    element('td', { class: 'num se' }, f.se ?? '—'),
    element('td', { class: 'num ci', title: `interval: ${p.ci_method}` },
      p.ci_low === null && p.ci_high === null ? '—' : `${end(f.low)} to ${end(f.high)}`),
    element('td', { class: 'unit' }, p.unit ?? '(no unit read)'),
  );
  return row;
}

/** The replicates at each concentration (count, mean, SD, SEM, from the
 *  core) in a folded table; hidden when no concentration has two. */
function showReplicates(box, summaries, concentration, unit) {
  const any = (summaries ?? []).some((r) => r.count > 1);
  box.hidden = !any;
  const table = box.querySelector('table');
  const head = table.tHead.rows[0];
  head.replaceChildren(...[concentration, 'n', withUnit('mean', unit), withUnit('SD', unit), withUnit('SEM', unit)].map((h) => element('th', {}, h)));
  const body = table.tBodies[0];
  body.replaceChildren();
  if (!any) return;
  // A table of thousands of concentrations shows its first rows only.
  const shown = summaries.slice(0, REPLICATE_ROWS_SHOWN);
  for (const r of shown) {
    const tr = element('tr', { 'data-concentration': String(r.concentration), 'data-mean': String(r.mean) });
    for (const x of [formatNumber(r.concentration), String(r.count), formatNumber(r.mean), r.sd === null ? '—' : formatNumber(r.sd, 3), r.sem === null ? '—' : formatNumber(r.sem, 3)]) tr.append(element('td', { class: 'num' }, x));
    body.append(tr);
  }
  if (shown.length < summaries.length) {
    const note = element('tr', { class: 'footnote' });
    note.append(element('td', { colspan: '5', class: 'hint' }, `The first ${shown.length} of ${summaries.length.toLocaleString('en')} concentrations shown.`));
    body.append(note);
  }
}

// Rows of a replicate table drawn at most.
const REPLICATE_ROWS_SHOWN = 200;

/** Draws each plot of a result (the core's `PlotData`) on a canvas of its
 *  own in `box`, with its note and a *Figure* button; `current(index)`
 *  gives the plot to export when the button is pressed (by default the one
 *  drawn). Each canvas says whether it was drawn (`data-drawn`). */
function drawPlotList(box, plots, { width = 480, height = 320, current = (index) => plots[index] } = {}) {
  box.replaceChildren();
  plots.forEach((plot, index) => {
    const figure = document.createElement('figure');
    const canvas = element('canvas', { id: `${box.id}-${index}`, width: String(width), height: String(height), 'data-kind': plot.kind });
    const button = element('button', { type: 'button', title: 'Download this plot as a figure (settings in the Plots section)' }, 'Figure');
    button.addEventListener('click', () => {
      const shown = current(index);
      if (shown) exportFigure(shown.kind, (options) => wasm_bindgen.plotFigureSvg(JSON.stringify(shown), options));
    });
    const caption = document.createElement('figcaption');
    caption.append(element('span', { class: 'note' }, plot.note ?? ''), ' ', button);
    figure.append(canvas, caption);
    box.append(figure);
    try {
      wasm_bindgen.drawPlotJson(canvas.id, JSON.stringify(plot));
      canvas.dataset.drawn = 'yes';
    } catch (error) {
      canvas.dataset.drawn = 'no';
      console.warn(`${plot.kind}: ${error?.message ?? error}`);
    }
  });
}

/** A seeded generator for the invented demo data (mulberry32 and
 *  Box-Muller): `uniform()` in [0, 1), `normal()` standard normal. */
function seededNoise(seed) {
  let state = seed;
  const uniform = () => {
    state = (state + 0x6d2b79f5) | 0;
    let t = Math.imul(state ^ (state >>> 15), 1 | state);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  return { uniform, normal: () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform()) };
}

function element(tag, attributes = {}, text) {
  const node = document.createElement(tag);
  for (const [key, value] of Object.entries(attributes)) node.setAttribute(key, value);
  if (text !== undefined) node.textContent = text;
  return node;
}

function showProblems(problems, fatal, fieldProblems = []) {
  const box = $('input-problems');
  box.replaceChildren();
  for (const text of fieldProblems) box.append(element('p', { class: 'field-problem' }, text));
  if (!problems.length && !fatal) return;
  if (fatal) {
    box.append(element('h4', {}, 'No fit could be made'), element('p', {}, fatal));
  }
  if (problems.length) {
    box.append(element('h4', {}, `${problems.length} problem${problems.length === 1 ? '' : 's'} in the table (these lines were not used)`));
    const list = element('ul');
    for (const p of problems) {
      const where = p.column ? `line ${p.line}, column ${p.column}` : `line ${p.line}`;
      const item = element('li', { 'data-line': p.line, title: 'Show this line in the table' }, `${where}: ${p.message}`);
      item.addEventListener('click', () => selectLine($('data-input'), p.line));
      list.append(item);
    }
    box.append(list);
  }
}

/** Selects line `line` (from 1) of a text box and scrolls it into view,
 *  so that "line 23" in a message can be found without counting. */
function selectLine(box, line) {
  const lines = box.value.split('\n');
  const start = lines.slice(0, line - 1).reduce((sum, l) => sum + l.length + 1, 0);
  const end = start + (lines[line - 1]?.length ?? 0);
  box.focus();
  box.setSelectionRange(start, end);
  const height = box.scrollHeight / Math.max(1, lines.length);
  box.scrollTop = Math.max(0, (line - 3) * height);
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
  for (const p of fit.parameters) body.append(parameterRow(p));
  if (fit.parameters.some((p) => p.derived)) {
    const note = element('tr', { class: 'footnote' });
    note.append(element('td', { colspan: '5', class: 'hint' }, '† computed from Vmax, Km and the inputs taken as exact ([E]t, protein, molar mass); standard error by the delta method with the full covariance; interval by the method chosen (delta method when asymptotic; kcat/Km profiled by refitting with Vmax/Km as a parameter).'));
    body.append(note);
  }

  showReplicates($('replicates-box'), result.replicates, withUnit('[S]', result.units.substrate), result.units.rate);

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

  $('method').textContent = rateMethods(result, workspace.doc);
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
  if (result.error_structure) add('Error structure', result.error_structure.text);
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
/** The rate-law comparison, when its panel is open: `laws`, when given,
 *  is the comparison the background analysis made alongside the fit
 *  (`{view}` or `{error}`). */
function showRateLaws(laws) {
  const body = $('rate-law-ranking').tBodies[0];
  const verdict = $('rate-law-verdict');
  body.replaceChildren();
  verdict.textContent = '';
  if (!$('rate-laws').open || !state.result) return;
  if (laws?.error) {
    verdict.textContent = `No comparison: ${laws.error}`;
    return;
  }
  let view = laws?.view;
  const { request } = rateRequest(workspace.doc);
  if (!view && worthBackground(request, 1)) {
    // Opened after a large table was fitted: the fit again in the
    // background, with the comparison this time.
    rates.forget();
    rates.flush();
    return;
  }
  if (!view) {
    try {
      view = workbench.compare_rate_laws(request);
    } catch (error) {
      if (coreFailed(error)) return;
      verdict.textContent = `No comparison: ${error?.message ?? error}`;
      return;
    }
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
  $('replicates-box').hidden = true;
  $('status').dataset.state = 'error';
  $('status').textContent = message;
  $('points-table').tBodies[0].replaceChildren();
  $('method').textContent = '';
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
    if (!drawPlot(kind)) return;
  }
}

/** Resolves in a later page task, so that long work yields to the page. */
function nextTask() {
  return new Promise((resolve) => setTimeout(resolve, 0));
}

/** Draws one of the rate plots; false when the core has failed. */
function drawPlot(kind) {
  try {
    state.positions[kind] = workbench.draw(`plot-${kind}`, kind);
  } catch (error) {
    state.positions[kind] = [];
    if (coreFailed(error)) return false;
    console.warn(`plot ${kind}: ${error.message ?? error}`);
  }
  return true;
}

// ------------------------------------------------------------ points, methods, exports

/** The table of points: every line read, with its fitted value and
 *  residual, and whether it was used. A click leaves a point out. */
function showPoints(result) {
  const body = $('points-table').tBodies[0];
  const u = result.units;
  const head = $('points-table').tHead.rows[0].cells;
  head[1].textContent = u.substrate ? `[S] (${u.substrate})` : '[S]';
  head[2].textContent = u.rate ? `v (${u.rate})` : 'v';
  // A long table shows its first rows and every point that is flagged or
  // left out; all of them are in the CSV export.
  const shown = result.points.length <= POINTS_SHOWN ? result.points
    : result.points.filter((p, k) => k < POINTS_SHOWN / 2 || p.flagged || p.excluded);
  const rows = shown.map((p) => {
    const row = element('tr', { 'data-line': String(p.line) });
    if (p.excluded) row.classList.add('left-out');
    if (p.flagged) row.classList.add('flagged');
    const num = (x, digits = 4) => element('td', { class: 'num' }, x === null || x === undefined ? '—' : formatNumber(x, digits));
    row.append(element('td', {}, `${p.line}${p.flagged ? ' ⚑' : ''}`), num(p.s), num(p.v), num(p.fitted), num(p.residual, 3),
      num(p.studentised, 3), num(p.leverage, 3), num(p.weight, 3), element('td', {}, p.excluded ? 'left out' : 'used'));
    row.addEventListener('click', () => togglePoint(p));
    return row;
  });
  if (shown.length < result.points.length) {
    const note = element('tr', { class: 'footnote' });
    note.append(element('td', { colspan: '9', class: 'hint' }, `${shown.length} of ${result.points.length} points shown: the first ${POINTS_SHOWN / 2} and every one flagged or left out. All of them are in “CSV: points”.`));
    rows.push(note);
  }
  body.replaceChildren(...rows);
}

// Rows of the points table drawn at most (a table of thousands of rows
// holds the page for seconds and helps nobody read it).
const POINTS_SHOWN = 400;

const WEIGHT_WORDS = {
  uniform: 'equal weights (constant absolute error)',
  relative: 'weights 1/v² with v from the fitted curve, iterated until they settle (constant relative error)',
  poisson: 'weights 1/v with v from the fitted curve, iterated until they settle (variance proportional to v)',
  sd: 'weights 1/sd² from the sd column',
  relative_measured: 'weights 1/v² on the measured rates (constant relative error; as Turnover 0.1 weighted)',
  poisson_measured: 'weights 1/v on the measured rates (as Turnover 0.1 weighted)',
};
const INTERVAL_WORDS = {
  asymptotic: 'estimate ± t(0.975, n − p)·SE',
  profile: 'profile-likelihood intervals (each constant held fixed in turn and the others refitted)',
  bootstrap: 'bootstrap percentile intervals',
  delta: 'delta-method intervals',
};

/** One fit, said as a methods sentence: the model, the fitting, the
 *  weighting, the interval method, n and the version that computed it. */
function fitMethods(fit, what, bootstrap) {
  const method = fit.parameters.find((p) => !p.derived)?.ci_method ?? 'asymptotic';
  const level = Math.round(fit.confidence_level * 100);
  let text = `${what} were fitted to ${fit.equation} by nonlinear least squares (Levenberg-Marquardt) with ${WEIGHT_WORDS[fit.weighting] ?? `${fit.weighting} weights`}, n = ${fit.n} (${fit.dof} degrees of freedom). Standard errors are from the asymptotic covariance matrix; ${level}% intervals are ${INTERVAL_WORDS[method] ?? method}`;
  if (bootstrap) text += ` (${bootstrap.resamples} resamples of the ${bootstrap.scheme === 'case' ? 'rows' : 'residuals'}, seed ${bootstrap.seed})`;
  return `${text}.`;
}

function versionText() {
  return `Computed with Turnover ${wasm_bindgen.version()} (one HTML file, offline).`;
}

function rateMethods(result, doc) {
  const u = result.units;
  const used = result.points.filter((p) => !p.excluded);
  const s = used.map((p) => p.s);
  const levels = new Set(s).size;
  const range = s.length ? `${formatNumber(Math.min(...s), 3)}–${formatNumber(Math.max(...s), 3)}${u.substrate ? ` ${u.substrate}` : ''}` : '';
  const parts = [fitMethods(result.fit, `Initial rates at ${levels} substrate concentrations (${range})`, result.bootstrap)];
  const kcat = result.fit.parameters.find((p) => p.name === 'kcat');
  if (kcat && result.enzyme_from_protein) parts.push(`kcat = Vmax/[E]t with [E]t from the protein concentration (${doc.rates.protein} ${doc.rates.protein_unit}) and the molar mass (${doc.rates.molar_mass} ${doc.rates.molar_mass_unit}), taking the protein as pure, fully active enzyme; kcat/Km with its error from the full covariance.`);
  else if (kcat && result.kcat_from_molar_mass) parts.push(`kcat = Vmax × molar mass (${doc.rates.molar_mass} ${doc.rates.molar_mass_unit}) with Vmax a specific activity (${u.rate}), taking the protein as pure, fully active enzyme with one active site per molar mass; kcat/Km with its error from the full covariance.`);
  else if (kcat) parts.push(`kcat = Vmax/[E]t with [E]t = ${doc.rates.enzyme} ${doc.rates.enzyme_unit} taken as exact; kcat/Km with its error from the full covariance.`);
  if (result.fit.parameters.some((p) => p.name === 'specific activity')) parts.push(`Specific activity = Vmax/protein with the protein concentration ${doc.rates.protein} ${doc.rates.protein_unit} taken as exact.`);
  const left = result.points.filter((p) => p.excluded).map((p) => p.line);
  if (left.length) parts.push(`${left.length} point${left.length === 1 ? ' was' : 's were'} left out of the fit (input line${left.length === 1 ? '' : 's'} ${left.join(', ')}).`);
  parts.push(versionText());
  return parts.join(' ');
}

function csvCell(value) {
  if (value === null || value === undefined) return '';
  if (typeof value === 'number') return Number.isFinite(value) ? String(value) : '';
  if (typeof value === 'boolean') return value ? 'yes' : 'no';
  const text = String(value);
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** Rows as CSV text (RFC 4180), numbers at full precision: the shortest
 *  decimal that reads back as the same double. */
function csvText(rows) {
  return rows.map((row) => row.map(csvCell).join(',')).join('\r\n') + '\r\n';
}

/** One row per constant, with the fit's statistics on every row, so the
 *  file reads as one tidy table. */
function constantsRows(fits) {
  const rows = [['model', 'constant', 'estimate', 'std_error', 'ci_low', 'ci_high', 'ci_method', 'unit', 'derived',
    'n', 'dof', 'rss', 'residual_sd', 'r_squared', 'aicc', 'converged', 'weighting', 'confidence_level', 'bias', 'value_bias_corrected']];
  for (const fit of fits) {
    for (const p of fit.parameters) {
      rows.push([fit.model, p.name, p.value, p.std_error, p.ci_low, p.ci_high, p.ci_method, p.unit ?? '', p.derived,
        fit.n, fit.dof, fit.rss, fit.sigma, fit.r_squared, fit.aicc, fit.converged, fit.weighting, fit.confidence_level,
        p.bias ?? null, p.value_bias_corrected ?? null]);
    }
  }
  return rows;
}

function withUnit(name, unit) {
  return unit ? `${name} (${unit})` : name;
}

function ratePointRows(result) {
  const u = result.units;
  const rows = [['line', withUnit('s', u.substrate), withUnit('v', u.rate), 'fitted', 'residual', 'studentised', 'leverage', 'weight', 'sd', 'used', 'flagged']];
  for (const p of result.points) rows.push([p.line, p.s, p.v, p.fitted, p.residual, p.studentised, p.leverage, p.weight, p.sd, !p.excluded, p.flagged]);
  return rows;
}

function fileStem() {
  return workspace.doc.name.replace(/[^\w.-]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 40) || 'analysis';
}

function downloadCsv(suffix, rows) {
  download(`turnover-${fileStem()}-${suffix}.csv`, 'text/csv', csvText(rows));
}

// ------------------------------------------------------------ figures as PNG

// CRC-32 of the PNG chunk format (ISO 3309 polynomial, as the PNG
// specification, W3C/ISO 15948, requires for every chunk).
const CRC_TABLE = (() => {
  const table = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    table[n] = c >>> 0;
  }
  return table;
})();

function crc32(bytes) {
  let c = 0xffffffff;
  for (const b of bytes) c = CRC_TABLE[(c ^ b) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

/** The PNG with a pHYs chunk (pixels per metre) after its header, so that
 *  programs that place it know its size in millimetres. */
function withResolution(png, dpi) {
  const perMetre = Math.round(dpi / 0.0254);
  const chunk = new Uint8Array(21);
  const view = new DataView(chunk.buffer);
  view.setUint32(0, 9);
  chunk.set([0x70, 0x48, 0x59, 0x73], 4); // "pHYs"
  view.setUint32(8, perMetre);
  view.setUint32(12, perMetre);
  chunk[16] = 1; // the unit is the metre
  view.setUint32(17, crc32(chunk.subarray(4, 17)));
  // Signature (8 bytes), then IHDR (4 + 4 + 13 + 4 bytes).
  const at = 8 + 25;
  const out = new Uint8Array(png.length + chunk.length);
  out.set(png.subarray(0, at), 0);
  out.set(chunk, at);
  out.set(png.subarray(at), at + chunk.length);
  return out;
}

/** An SVG figure drawn by the browser into a PNG of `widthMm` × `heightMm`
 *  at `dpi`, white background, with its resolution recorded. */
async function svgToPng(svgText, widthMm, heightMm, dpi) {
  const width = Math.round((widthMm / 25.4) * dpi);
  const height = Math.round((heightMm / 25.4) * dpi);
  const url = URL.createObjectURL(new Blob([svgText], { type: 'image/svg+xml' }));
  try {
    const image = new Image();
    await new Promise((resolve, reject) => {
      image.onload = resolve;
      image.onerror = () => reject(new Error('the browser could not draw the figure'));
      image.src = url;
    });
    const canvas = document.createElement('canvas');
    canvas.width = width;
    canvas.height = height;
    const context = canvas.getContext('2d');
    context.fillStyle = '#ffffff';
    context.fillRect(0, 0, width, height);
    context.drawImage(image, 0, 0, width, height);
    const blob = await new Promise((resolve) => canvas.toBlob(resolve, 'image/png'));
    return withResolution(new Uint8Array(await blob.arrayBuffer()), dpi);
  } finally {
    URL.revokeObjectURL(url);
  }
}

// ------------------------------------------------------------ figure export

/** The figure settings of the document as the core's options, or a
 *  problem naming the field that cannot be read. */
function figureOptions(doc, constants) {
  const f = doc.figure;
  const problems = [];
  const number = (text, label, low, high) => {
    const { value, problem } = readTyped(text);
    if (problem || value === null || value < low || value > high) {
      problems.push(`${label}: ${problem ?? `'${text}' is not between ${low} and ${high}`}`);
      return null;
    }
    return value;
  };
  const options = {
    width_mm: number(f.width_mm, 'width', 20, 500),
    height_mm: number(f.height_mm, 'height', 20, 500),
    font_pt: number(f.font_pt, 'text size', 4, 24),
    title: f.title,
    constants: f.constants && constants ? constants : null,
    error_bars: f.error_bars,
  };
  return { options, problem: problems.length ? `Figure settings: ${problems.join('; ')}.` : null };
}

/** Downloads a figure: `svg(optionsJson)` draws it by the core's one
 *  drawing path; PNG is the same SVG drawn by the browser at the chosen
 *  resolution. `constants()` gives the text block for "constants on the plot". */
async function exportFigure(name, svg, constants = () => null) {
  const doc = workspace.doc;
  const note = $('figure-note');
  const { options, problem } = figureOptions(doc, doc.figure.constants ? constants() : null);
  if (problem) {
    note.textContent = problem;
    return null;
  }
  let text;
  try {
    text = svg(JSON.stringify(options));
  } catch (error) {
    if (coreFailed(error)) return null;
    note.textContent = `No figure: ${error?.message ?? error}`;
    return null;
  }
  note.textContent = '';
  const stem = `turnover-${fileStem()}-${name}`;
  if (doc.figure.format === 'png') {
    const dpi = readTyped(doc.figure.dpi).value ?? 300;
    const png = await svgToPng(text, options.width_mm, options.height_mm, dpi);
    download(`${stem}.png`, 'image/png', png);
    return png;
  }
  download(`${stem}.svg`, 'image/svg+xml', text);
  return text;
}

// ------------------------------------------------------------ the reporting checklist

/** The items a report of these constants needs (after the STRENDA
 *  guidelines, from memory: check the current published list), each with
 *  what this analysis holds, or null when it is for the person to give. */
function checklist(doc) {
  const a = doc.assay;
  const r = state.result;
  const given = (text) => (text && text.trim() ? text.trim() : null);
  const points = r ? r.points.filter((p) => !p.excluded) : [];
  const s = points.map((p) => p.s);
  const counts = new Map();
  for (const x of s) counts.set(x, (counts.get(x) ?? 0) + 1);
  const fromTraces = doc.traces.text.trim() ? 'from time courses in this analysis: straight-line windows using at most the stated share of [S]₀, flags for depletion and curvature' : null;
  return [
    ['Enzyme identity (name, EC number)', given(a.enzyme)],
    ['Source and preparation (organism, host, purity)', given(a.source)],
    ['Assay temperature', given(a.temperature)],
    ['Assay pH', given(a.ph)],
    ['Buffer and other components (salts, cofactors, additives)', given(a.buffer)],
    ['Assay method (what was measured, continuous or not)', given(a.method)],
    ['Enzyme concentration in the assay', given(doc.rates.enzyme) ? `${doc.rates.enzyme} ${doc.rates.enzyme_unit}` : null],
    ['Substrate concentrations', s.length ? `${counts.size} concentrations, ${formatNumber(Math.min(...s), 3)}–${formatNumber(Math.max(...s), 3)} ${r.units.substrate ?? ''}` : null],
    ['Replicates', s.length ? `${points.length} rates; ${[...counts.values()].every((c) => c > 1) ? `${Math.min(...counts.values())}–${Math.max(...counts.values())} per concentration` : 'not every concentration replicated'}` : null],
    ['How initial rates were obtained (linearity, substrate used)', fromTraces],
    ['Model and fitting method', r ? `${r.fit.equation}; nonlinear least squares, ${WEIGHT_WORDS[r.fit.weighting] ?? r.fit.weighting}` : null],
    ['Constants with units and uncertainties', r ? r.fit.parameters.map((p) => `${p.name} ${formatNumber(p.value, 4)} ± ${formatNumber(p.std_error, 2)} ${p.unit ?? ''}`).join('; ') : null],
    ['Software and version', `Turnover ${wasm_bindgen.version()}`],
    ['Notes', given(doc.notes)],
  ];
}

function showChecklist(doc) {
  const body = $('checklist').tBodies[0];
  body.replaceChildren(...checklist(doc).map(([item, value]) => {
    const row = element('tr', { 'data-given': value ? 'yes' : 'no' });
    row.append(element('td', {}, item), element('td', {}, value ?? 'not given: add it in Assay details or your notes'));
    return row;
  }));
}

// ------------------------------------------------------------ derived results

// Every result on the page is a function of the document. `derived`
// recomputes one when the parts of the document it reads change (compared
// by a key made from them), at once after a discrete edit, or shortly
// after typing stops; meanwhile the shown result is marked out of date
// (`stale(true)`), and `fresh()` says whether it matches the document.
const derivations = [];
let typing = false;

function derived({ key, compute, stale }) {
  let shownKey;
  let timer = null;
  const run = () => {
    clearTimeout(timer);
    timer = null;
    const k = key(workspace.doc);
    if (k === shownKey) return;
    shownKey = k;
    stale?.(false);
    compute(workspace.doc);
  };
  const entry = {
    flush: run,
    fresh: () => timer === null && shownKey === key(workspace.doc),
    forget: () => { shownKey = undefined; },
  };
  derivations.push(entry);
  workspace.view((doc) => {
    if (key(doc) === shownKey) {
      if (timer !== null) {
        clearTimeout(timer);
        timer = null;
        stale?.(false);
      }
      return;
    }
    if (typing) {
      stale?.(true);
      clearTimeout(timer);
      timer = setTimeout(run, 350);
    } else run();
  });
  return entry;
}

/** Brings every result up to date with the document now. */
function flushAll() {
  for (const d of derivations) d.flush();
}

/** Dispatches an edit made by typing: one undo step per burst of typing,
 *  results recomputed when the typing pauses. */
function typed(edit, coalesce) {
  typing = true;
  try {
    workspace.dispatch(edit, { coalesce });
  } finally {
    typing = false;
  }
}

function markStale(on) {
  for (const id of ['fit-panel', 'plots-panel']) $(id).classList.toggle('stale', on);
  if (on) {
    $('status').dataset.state = 'stale';
    $('status').textContent = 'Out of date: the inputs changed; refitting when you pause…';
  }
}

function computeRates(doc) {
  computeRateResult(doc);
  markRateSections();
}

/** The printed report leaves out sections with nothing to show. */
function markRateSections() {
  for (const id of ['data-panel', 'fit-panel', 'plots-panel']) $(id).classList.toggle('no-data', !state.result);
}

function computeRateResult(doc) {
  // A background fit of an earlier version of the table is no longer wanted.
  stopRateJob();
  const { request, problems, blocking } = rateRequest(doc);
  if (!request.text.trim()) {
    state.result = null;
    state.error = null;
    showProblems([], null, problems);
    $('notes').replaceChildren();
    clearResult('No table yet: paste [S] and v above, open a file, or load the demo.');
    $('status').dataset.state = 'idle';
    return;
  }
  if (blocking) {
    state.result = null;
    state.error = problems.join(' ');
    showProblems([], null, problems);
    $('notes').replaceChildren();
    clearResult(`No fit: ${problems.join(' ')}`);
    return;
  }
  if (worthBackground(request, 1)) {
    startRateJob(request, problems);
    return;
  }
  let result;
  try {
    result = workbench.analyse(request);
  } catch (error) {
    if (coreFailed(error)) return;
    rateFailed(error?.message ?? String(error), problems);
    return;
  }
  showRateResult(result, problems);
}

/** Says why no fit was made; nothing stale stays on the page. */
function rateFailed(message, problems) {
  state.result = null;
  state.error = message;
  showProblems([], message, problems);
  $('notes').replaceChildren();
  clearResult(`No fit: ${message}`);
}

/** Shows a result; `drawn`: its plots are drawn already. */
function showRateResult(result, problems, laws, { drawn = false } = {}) {
  state.result = result;
  state.error = null;
  showProblems(result.problems, null, problems);
  showResult(result);
  showPoints(result);
  if (problems.length) {
    if ($('status').dataset.state === 'ok') $('status').dataset.state = 'warn';
    $('status').textContent += ' A field could not be read: see the note under the table.';
  }
  if (!drawn) drawPlots();
  showRateLaws(laws);
}

// ------------------------------------------------------------ large tables in the background

// A table whose analysis would hold the page for more than about a tenth
// of a second is analysed in a Web Worker of its own, with a running clock
// and Stop: above this much work, counted as the table's lines with each
// bootstrap resample worth a tenth of a line per line (the page's core
// fits a 5,000-row rate table with its checks in about a tenth of a
// second). Other sections count each line several times (their
// LINE_WORK): the inhibitor series fits four mechanisms.
const BACKGROUND_WORK = 5000;

function lineCount(text) {
  let lines = text.endsWith('\n') || text === '' ? 0 : 1;
  for (let i = text.indexOf('\n'); i !== -1; i = text.indexOf('\n', i + 1)) lines++;
  return lines;
}

function backgroundPossible() {
  return Boolean(wasmBinary && typeof Worker !== 'undefined' && typeof Blob !== 'undefined' && $('turnover-bindings')?.textContent);
}

/** A long table's points kept as columns, one array per field, read
 *  like the array of point objects a small table's result holds: length,
 *  at(k), iteration, filter, map, some, every. Why: 100,000 rows held as
 *  objects are about a million small objects on the page's heap (each
 *  point and its boxed numbers), and a major garbage collection over them
 *  held the page for 60–95 ms in one task (a Chromium trace of a
 *  100,000-row fit); as columns they are a dozen arrays. A point read
 *  from here is a small view (its index) whose fields are getters into
 *  the columns, the same for every point, so a pass over 100,000 of them
 *  costs little. A number column reads null where the result had null
 *  (JSON has no NaN, so NaN in the column stands for null exactly). */
class PointColumns {
  constructor(length, columns) {
    this.length = length;
    this.columns = columns;
    this.keys = Object.keys(columns);
    const fields = {};
    for (const [key, { kind, values }] of Object.entries(columns)) {
      const get = kind === 'number' ? function () { const x = values[this[ROW]]; return Number.isNaN(x) ? null : x; }
        : kind === 'flag' ? function () { return values[this[ROW]] === 1; }
          : function () { return values[this[ROW]]; };
      Object.defineProperty(fields, key, { get, enumerable: true });
    }
    this.View = function PointView(k) { this[ROW] = k; };
    this.View.prototype = fields;
  }

  at(k) {
    if (k < 0) k += this.length;
    return k >= 0 && k < this.length ? new this.View(k) : undefined;
  }

  * [Symbol.iterator]() {
    for (let k = 0; k < this.length; k++) yield new this.View(k);
  }

  filter(keep) {
    const kept = [];
    for (let k = 0; k < this.length; k++) {
      const point = new this.View(k);
      if (keep(point, k)) kept.push(point);
    }
    return kept;
  }

  map(f) {
    return Array.from({ length: this.length }, (_, k) => f(new this.View(k), k));
  }

  some(test) {
    for (let k = 0; k < this.length; k++) if (test(new this.View(k), k)) return true;
    return false;
  }

  every(test) {
    return !this.some((point, k) => !test(point, k));
  }

  /** The points as plain objects, as a small table's result has them. */
  toArray() {
    return this.map((view) => Object.fromEntries(this.keys.map((key) => [key, view[key]])));
  }
}

/** A point view's index into its columns. */
const ROW = Symbol('row in the columns');

/** A result as the test and console hooks give it: a long table's points
 *  as a plain array (made when read), so that it serialises as a small
 *  table's does. */
function plainResult(result) {
  if (!(result?.points instanceof PointColumns)) return result;
  const columns = result.points;
  const copy = { ...result };
  Object.defineProperty(copy, 'points', { enumerable: true, get: () => columns.toArray() });
  return copy;
}

/** The background worker's code: the wasm-bindgen glue followed by this
 *  function's text. One job per worker: the core function `job.run` (one
 *  that returns `{result, kept}`), and the rate-law comparison when asked;
 *  the page ends the worker to stop it. */
function analysisWorkerMain() {
  /* global wasm_bindgen */
  self.onmessage = (event) => {
    const job = event.data;
    try {
      if (job.kind === 'start') {
        wasm_bindgen.initSync({ module: job.module });
        return;
      }
      const { result, kept } = wasm_bindgen[job.run](job.request);
      // The points travel as columns, one array per field, whose buffers
      // are transferred, not copied; see PointColumns.
      const parsed = JSON.parse(result);
      const points = parsed.points ?? [];
      parsed.points = [];
      const columns = {};
      const buffers = [];
      for (const key of Object.keys(points[0] ?? {})) {
        const values = points.map((p) => p[key]);
        const numeric = values.every((x) => typeof x === 'number' || x === null);
        const flags = !numeric && values.every((x) => typeof x === 'boolean');
        if (numeric || flags) {
          const column = numeric ? Float64Array.from(values, (x) => (x === null ? NaN : x)) : Uint8Array.from(values, Number);
          columns[key] = { kind: numeric ? 'number' : 'flag', values: column };
          buffers.push(column.buffer);
        } else columns[key] = { kind: 'any', values };
      }
      let laws = null;
      if (job.compareLaws) {
        try {
          laws = { view: new wasm_bindgen.Workbench().compare_rate_laws(job.request) };
        } catch (error) {
          laws = { error: error?.message ?? String(error) };
        }
      }
      self.postMessage({ kind: 'done', result: JSON.stringify(parsed), points: { length: points.length, columns }, kept, laws }, buffers);
    } catch (error) {
      self.postMessage({ kind: 'error', message: error?.message ?? String(error), trapped: error instanceof WebAssembly.RuntimeError });
    }
  };
}

/** Runs one analysis in the background for the section whose busy line is
 *  `#{prefix}-busy` (with `#{prefix}-busy-text` and `#{prefix}-stop`):
 *  `what` says what runs ("Fitting a 30,001-line table"). `done(m)` gets
 *  `{result, kept, laws}`: the result as an object (its points as a
 *  PointColumns), the kept text for the section's
 *  bench, the rate-law comparison; `failed(message)` gets a sentence.
 *  Returns `stop()`, which ends the worker, or drops an answer still being
 *  read, without a word (the section says what stopping means). */
function backgroundAnalysis({ prefix, what, run, request, compareLaws = false, done, failed }) {
  const url = URL.createObjectURL(new Blob([`${$('turnover-bindings').textContent}\n(${analysisWorkerMain.toString()})();\n`], { type: 'text/javascript' }));
  const handle = new Worker(url);
  const started = performance.now();
  let over = false;
  let dropped = false;
  const tick = () => {
    $(`${prefix}-busy-text`).textContent = `${what} in the background: ${((performance.now() - started) / 1000).toFixed(0)} s so far. The rest of the page can be used meanwhile.`;
  };
  tick();
  $(`${prefix}-busy`).hidden = false;
  const timer = setInterval(tick, 1000);
  const stop = () => {
    dropped = true;
    if (over) return;
    over = true;
    handle.terminate();
    clearInterval(timer);
    URL.revokeObjectURL(url);
    $(`${prefix}-busy`).hidden = true;
  };
  handle.onerror = (event) => {
    if (over) return;
    stop();
    failed(`the background computation stopped: ${event.message || 'the worker failed'}`);
  };
  handle.onmessage = async (event) => {
    if (over) return;
    stop();
    dropped = false;
    const m = event.data;
    if (m.kind === 'error') {
      failed(m.trapped ? `the computing core stopped on an internal error (${m.message}); try again` : m.message);
      return;
    }
    const result = JSON.parse(m.result);
    result.points = new PointColumns(m.points.length, m.points.columns);
    await nextTask();
    if (!dropped) done({ result, kept: m.kept, laws: m.laws });
  };
  postCore(handle);
  handle.postMessage({ kind: 'analyse', run, request, compareLaws });
  return stop;
}

/** A section's whole fit in the background (the inhibitor series, the
 *  dose-response series): `#{prefix}-status` says what runs, the section's
 *  bench takes the kept plots, `show(result)` or `fail(message)` follows;
 *  *Stop* says it stopped and offers `#{prefix}-rerun` (*Fit it again*),
 *  which recomputes `section`. Returns `stop()`, safe to call at any time. */
function sectionInBackground({ prefix, section, bench, what, run, request, show, fail }) {
  bench.forget();
  const status = $(`${prefix}-status`);
  status.dataset.state = 'idle';
  status.textContent = `${what}…`;
  $(`${prefix}-rerun`).hidden = true;
  const stop = backgroundAnalysis({
    prefix,
    what,
    run,
    request,
    failed: fail,
    done: (m) => {
      try {
        bench.adopt(m.kept);
      } catch (error) {
        if (!coreFailed(error)) fail(error?.message ?? String(error));
        return;
      }
      show(m.result);
    },
  });
  $(`${prefix}-stop`).onclick = () => {
    if ($(`${prefix}-busy`).hidden) return;
    stop();
    section.forget();
    status.dataset.state = 'warn';
    status.textContent = 'Stopped: the fit of this table was stopped before it finished, so no constants are shown.';
    $(`${prefix}-rerun`).hidden = false;
    $(`${prefix}-rerun`).querySelector('button').onclick = () => {
      section.forget();
      section.flush();
    };
  };
  return stop;
}

/** Whether a table with this request's lines, each worth `lineWork`
 *  (bootstrap resamples count), goes to the background. */
function worthBackground(request, lineWork) {
  const resamples = request.interval_method === 'bootstrap' ? request.bootstrap.resamples : 0;
  return lineCount(request.text) * lineWork * (1 + resamples / 10) > BACKGROUND_WORK && backgroundPossible();
}

/** "with 2,000 bootstrap resamples" when the request asks for them. */
function resampleWords(request) {
  return request.interval_method === 'bootstrap' ? ` with ${request.bootstrap.resamples.toLocaleString('en')} bootstrap resamples` : '';
}

// Stops the rate analysis under way in the background, if any.
let stopRateJob = () => {};

function startRateJob(request, problems) {
  // Nothing of the previous table stays on show while the new one is fitted.
  state.result = null;
  state.error = null;
  workbench.forget();
  showProblems([], null, problems);
  $('notes').replaceChildren();
  const what = `Fitting a ${lineCount(request.text).toLocaleString('en')}-line table${resampleWords(request)}`;
  clearResult(`${what}…`);
  $('status').dataset.state = 'idle';
  // Each plot drawn in a page task of its own (a long table's plots took
  // one task of up to 150 ms together), then shown in the next; an edit in
  // between drops it.
  let dropped = false;
  const stop = backgroundAnalysis({
    prefix: 'rates',
    what,
    run: 'analyseRatesInWorker',
    request,
    compareLaws: $('rate-laws').open,
    failed: (message) => rateFailed(message, problems),
    done: async (m) => {
      try {
        workbench.adopt(m.kept);
      } catch (error) {
        if (coreFailed(error)) return;
        rateFailed(error?.message ?? String(error), problems);
        return;
      }
      // Taking over the worker's state is a task of its own (about 30 ms
      // for 100,000 rows), apart from the first plot's drawing.
      await nextTask();
      if (dropped) return;
      for (const kind of PLOT_KINDS) {
        if (!drawPlot(kind)) return;
        await nextTask();
        if (dropped) return;
      }
      showRateResult(m.result, problems, m.laws, { drawn: true });
      markRateSections();
    },
  });
  stopRateJob = () => {
    dropped = true;
    stop();
  };
}

/** Stop: the analysis is dropped and the section says so; *Fit* runs it
 *  again. */
function stopRatesOnRequest() {
  if ($('rates-busy').hidden) return;
  stopRateJob();
  rates.forget();
  clearResult('Stopped: the fit of this table was stopped before it finished, so no constants are shown. Press Fit to run it again.');
  $('status').dataset.state = 'warn';
}

/** Which section a pasted table belongs to, by its columns: an inhibitor
 *  series ([S], [I] and rates, long or matrix), a dose-response series
 *  ([I] and a response, no [S]), or a rate table. */
function tableHome(text) {
  // What a table is shows in its header and first rows; a long table is
  // judged by its first 500 lines (reading 100,000 lines twice took half
  // a second for this question alone).
  const head = text.length > 50_000 ? text.split('\n', 500).join('\n') : text;
  if (wasm_bindgen.isInhibitionTable(head)) return 'inhibition';
  if (wasm_bindgen.isDoseTable(head)) return 'dose';
  return 'rates';
}

const SECTION_WORDS = {
  rates: ['a rate table ([S] and v)', 'the rate section'],
  inhibition: ['an inhibitor series ([S], [I] and rates)', 'the inhibitor-series section'],
  dose: ['a dose-response series ([I] and a response, no [S])', 'the dose-response section'],
};

/** A table pasted or typed into a section's input: kept there, or moved
 *  to the section it belongs to with a note (one undo step). */
function tableEntered(section, value, noteId) {
  let home = value.trim() ? tableHome(value) : section;
  // Anything not recognised as an inhibitor or dose series counts as a
  // rate table only when the rate fit can read it.
  if (home === 'rates' && section !== 'rates' && !looksLikeRates(value)) home = section;
  const note = $(noteId);
  if (home === section) {
    note.hidden = true;
    typed({ type: 'set table', path: `${section}.text`, value }, `${section}.text`);
    return;
  }
  const wasDemo = workspace.doc.demo.length > 0;
  workspace.dispatch({ type: 'move table', to: home, value });
  note.hidden = false;
  note.textContent = `That table is ${SECTION_WORDS[home][0]}: it is now in ${SECTION_WORDS[home][1]}'s input, and is fitted there. ${wasDemo ? 'The demo data left with it.' : 'This box keeps what it had.'} Undo takes it back.`;
  $(`${home === 'rates' ? 'data' : home}-input`).scrollIntoView({ behavior: 'instant', block: 'center' });
}

// A second workbench for asking whether a table reads as rates, so that
// the one holding the shown analysis (and its plots) is not disturbed.
let probe = null;

/** A table that the rate fit reads (so one pasted into another section's
 *  input can be moved to the rate section). */
function looksLikeRates(text) {
  probe ??= new wasm_bindgen.Workbench();
  try {
    probe.analyse({ ...rateRequest(workspace.doc).request, text, excluded_lines: [], interval_method: 'asymptotic' });
    return true;
  } catch {
    return false;
  }
}

/** Drawn positions as `{row, x, y}`: the rate plots return them packed
 *  (an Int32Array of row, x, y per point), the others as objects. */
function* unpackPositions(positions) {
  if (positions instanceof Int32Array) {
    for (let k = 0; k + 2 < positions.length; k += 3) yield { row: positions[k], x: positions[k + 1], y: positions[k + 2] };
  } else yield* positions ?? [];
}

/** The drawn point nearest a click on `canvas` (within 10 CSS pixels),
 *  from the positions the core's drawing returned, or null. */
function nearestPoint(canvas, positions, event) {
  const scaleX = canvas.width / canvas.clientWidth;
  const box = canvas.getBoundingClientRect();
  const x = (event.clientX - box.left) * scaleX;
  const y = (event.clientY - box.top) * (canvas.height / canvas.clientHeight);
  let best = null;
  let bestDistance = 10 * scaleX;
  for (const p of unpackPositions(positions)) {
    const distance = Math.hypot(p.x - x, p.y - y);
    if (distance < bestDistance) {
      best = p;
      bestDistance = distance;
    }
  }
  return best;
}

function toggleAt(canvas, event) {
  if (!state.result || !rates.fresh()) return;
  const best = nearestPoint(canvas, state.positions[canvas.dataset.kind], event);
  if (best) togglePoint(state.result.points.at(best.row));
}

/** Leaves one point out or brings it back: its line, or its cell when the
 *  line holds several replicates. */
function togglePoint(point) {
  const shared = state.result.points.filter((p) => p.line === point.line).length > 1;
  if (shared && point.column) workspace.dispatch({ type: 'toggle cell', section: 'rates', cell: `${point.line}:${point.column}` });
  else workspace.dispatch({ type: 'toggle point', section: 'rates', line: point.line });
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
  flushAll();
  const doc = workspace.doc;
  const lines = [`# Turnover ${wasm_bindgen.version()} · ${new Date().toISOString()} · analysis: ${doc.name}`];
  if (doc.demo.length) lines.push('# this analysis holds demo data (invented, not measured)');
  if (state.result) {
    lines.push(...fitAsText('Rate fit', state.result.fit));
    lines.push(`# methods: ${rateMethods(state.result, doc)}`);
    lines.push('', '# points', ...ratePointRows(state.result).map((row) => row.map((x) => (typeof x === 'boolean' ? (x ? 'yes' : 'no') : x ?? '')).join('\t')));
  }
  // Other sections add their own results (inhibitor series, dose-response).
  for (const [name, text] of sectionTexts) {
    const extra = text();
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

// ------------------------------------------------------------ an internal error of the core

// A panic in the WebAssembly aborts that module: every later call into it
// would fail. The core reports the panic (its start hook calls
// `turnoverCorePanicked`); the page keeps the document, starts a fresh
// module from the same bytes, and derives every result again.
let restarting = false;
let panicMessage = null;
const restartHooks = [];

window.turnoverCorePanicked = (message) => {
  panicMessage = message;
  scheduleRestart();
};

/** True when `error` is the core's abort; a restart is then under way. */
function coreFailed(error) {
  if (!(error instanceof WebAssembly.RuntimeError)) return false;
  scheduleRestart();
  return true;
}

/** Starts a Web Worker's core: with the compiled module (no second
 *  compilation) where the browser can pass it, else with a copy of the
 *  bytes (the page keeps its own). */
function postCore(handle) {
  if (wasmModule) {
    try {
      handle.postMessage({ kind: 'start', module: wasmModule });
      return;
    } catch {
      // A browser that cannot pass a compiled module: the bytes below.
    }
  }
  handle.postMessage({ kind: 'start', module: wasmBinary.slice() });
}

function scheduleRestart() {
  if (restarting) return;
  restarting = true;
  setTimeout(restartCore, 0);
}

function restartCore() {
  const box = $('core-problem');
  box.hidden = false;
  const what = panicMessage ? ` (${panicMessage})` : '';
  try {
    if (!wasmBinary) throw new Error('this page was not built with its core inside');
    // The glue script again: a fresh `wasm_bindgen` whose module is not yet
    // started (assemble.mjs declares it with `var` for this).
    const glue = document.createElement('script');
    glue.textContent = $('turnover-bindings').textContent;
    document.head.append(glue);
    glue.remove();
    wasm_bindgen.initSync({ module: wasmModule ?? wasmBinary });
    workbench = new wasm_bindgen.Workbench();
    probe = null;
    for (const hook of restartHooks) hook();
    for (const d of derivations) d.forget();
    box.textContent = `The computing core stopped on an internal error${what}. Your analysis is kept; the core was started again and every result recomputed. If this happens again with the same data, export a session file and keep it with a note of what you did.`;
    workspace.render(null);
  } catch (error) {
    box.textContent = `The computing core stopped on an internal error${what} and could not be started again (${error?.message ?? error}). Your analysis is kept in this browser: reload the page to go on.`;
  } finally {
    restarting = false;
    panicMessage = null;
  }
}

// ------------------------------------------------------------ the document's controls

/** Shows a document field in a control and turns the control's changes
 *  into edits. Text fields dispatch as you type (one undo step per burst);
 *  the others on change. */
function bindField(id, path, { table = false } = {}) {
  const el = $(id);
  const isBox = el.type === 'checkbox';
  const isText = el.tagName === 'TEXTAREA' || (el.tagName === 'INPUT' && !isBox);
  const type = table ? 'set table' : 'set field';
  if (isText) {
    el.addEventListener('input', () => typed({ type, path, value: el.value }, path));
  } else {
    el.addEventListener('change', () => workspace.dispatch({ type, path, value: isBox ? el.checked : el.value }));
  }
  workspace.view((doc) => {
    const value = store.getPath(doc, path);
    if (isBox) {
      if (el.checked !== value) el.checked = value;
    } else if (el.value !== value) {
      el.value = value;
      // A select that does not offer the value shows it as unknown rather
      // than quietly showing its first option.
      if (el.tagName === 'SELECT' && el.value !== value) el.selectedIndex = -1;
    }
  });
}

// Sections' texts for "Copy results", by name.
const sectionTexts = new Map();

// Demo documents, by kind: each module adds its own part.
const demoParts = new Map();

/** A demo as an analysis of its own, named as the demo. */
function demoDocument(kind) {
  const kinds = kind === 'start' ? ['rates', 'plate'] : [kind];
  let doc = store.blankDocument();
  const names = [];
  for (const k of kinds) {
    const part = demoParts.get(k);
    if (!part) continue;
    doc = part.build(doc);
    names.push(part.name);
  }
  return { ...doc, name: `Demo: ${names.join(' and ')} (invented data)` };
}

function loadDemo(kind) {
  workspace.dispatch({ type: 'load demo', document: demoDocument(kind) });
}

demoParts.set('rates', {
  name: 'hydrolase Hyd-3 rates',
  build: (doc) => ({
    ...doc,
    demo: [...new Set([...doc.demo, 'rates', 'assay'])],
    assay: { ...doc.assay, enzyme: 'Hyd-3, a fictional hydrolase (demo)', source: 'an imaginary pond isolate (demo)', temperature: '30 °C', ph: '7.5' },
    rates: { ...doc.rates, text: DEMO_TABLE, substrate_unit: '', rate_unit: '', enzyme: '25', enzyme_unit: 'nM', excluded_lines: [] },
  }),
});

// ------------------------------------------------------------ analyses kept in this browser

let refusedText = null;

/** Says, once and plainly, that a document was refused, and keeps the
 *  refused text for download; the current analysis is untouched. */
function refuse(what, reason, text) {
  refusedText = text;
  const box = $('document-problem');
  box.hidden = false;
  $('document-problem-text').textContent = `${what} was not opened: ${reason}. Your current analysis is unchanged.`;
}

function info(text, withFreshButton = false) {
  $('restore-info').textContent = text;
  $('start-fresh').hidden = !withFreshButton;
  $('restore-line').hidden = !text;
}

function formatWhen(iso) {
  if (!iso) return 'an unknown date';
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return 'an unknown date';
  const pad = (n) => String(n).padStart(2, '0');
  return `${d.getFullYear()}-${pad(d.getMonth() + 1)}-${pad(d.getDate())} ${pad(d.getHours())}:${pad(d.getMinutes())}`;
}

function renderBar() {
  const doc = workspace.doc;
  const name = $('analysis-name');
  if (document.activeElement !== name && name.value !== doc.name) name.value = doc.name;
  const list = $('analysis-list');
  const entries = workspace.shelf.index();
  if (!entries.some((e) => e.id === doc.id)) entries.unshift({ id: doc.id, name: doc.name, updated: null });
  list.replaceChildren(...entries.map((e) => {
    const option = element('option', { value: e.id }, `${e.name} · ${e.updated ? formatWhen(e.updated) : 'not kept'}`);
    option.selected = e.id === doc.id;
    return option;
  }));
  const undo = workspace.undoLabel();
  const redo = workspace.redoLabel();
  $('undo').disabled = !undo;
  $('redo').disabled = !redo;
  $('undo').title = undo ? `Undo: ${undo} (Ctrl+Z)` : 'Nothing to undo';
  $('redo').title = redo ? `Redo: ${redo} (Ctrl+Shift+Z)` : 'Nothing to redo';
  $('demo-banner').hidden = !doc.demo.length;
  $('print-heading').textContent = `${doc.name} · printed ${formatWhen(new Date().toISOString())}${doc.demo.length ? ' · DEMO DATA: invented numbers, not measurements' : ''}`;
  document.title = `${doc.name} · Turnover`;
}

function openStored(id) {
  const stored = workspace.shelf.load(id);
  if (!stored) return;
  let value;
  try {
    value = JSON.parse(stored.text);
  } catch (error) {
    refuse('The stored analysis', `it is not valid JSON (${error.message})`, stored.text);
    renderBar();
    return;
  }
  const checked = store.validateDocument(value);
  if (checked.error) {
    refuse('The stored analysis', checked.error, stored.text);
    renderBar();
    return;
  }
  workspace.dispatch({ type: 'open analysis', document: checked.document });
  info(`Opened “${checked.document.name}”, last changed ${formatWhen(stored.updated)}.`);
}

/** Opens a document read from a file or a link as a new analysis. */
function openImported(text, what) {
  const checked = store.readDocumentText(text, { classify: tableHome });
  if (checked.error) {
    refuse(what, checked.error, text);
    return false;
  }
  $('document-problem').hidden = true;
  workspace.dispatch({ type: 'import document', document: { ...checked.document, id: store.newId() } });
  info(`Opened ${what.toLowerCase()}${checked.migrated ? ', written by an earlier version of Turnover and brought up to date' : ''}.`);
  return true;
}

function exportSession() {
  const doc = workspace.doc;
  const stamp = new Date().toISOString().slice(0, 16).replace(/[:T]/g, '-');
  const safe = doc.name.replace(/[^\w.-]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 40) || 'analysis';
  download(`turnover-${safe}-${stamp}.json`, 'application/json', `${JSON.stringify(doc, null, 1)}\n`);
}

async function shareLink() {
  const out = $('share-output');
  const note = $('share-note');
  const fragment = await store.linkFragment(workspace.doc);
  const base = location.href.replace(/#.*$/, '');
  const link = base + fragment;
  if (link.length > store.LINK_LIMIT) {
    out.hidden = true;
    out.value = '';
    note.dataset.state = 'warn';
    note.textContent = `This analysis needs a link of ${link.length.toLocaleString('en')} characters, over the ${store.LINK_LIMIT.toLocaleString('en')} that links can carry safely (mail and chat programs cut longer ones). Use “Export session file” instead and send the file.`;
    return null;
  }
  out.hidden = false;
  out.value = link;
  note.dataset.state = 'ok';
  note.textContent = `Link of ${link.length.toLocaleString('en')} characters. The analysis travels after the “#”, which browsers never send to any server; whoever opens the link needs this same page file.`;
  try {
    await navigator.clipboard.writeText(link);
    note.textContent += ' Copied.';
  } catch { /* the link stays in the box to copy by hand */ }
  return link;
}

function savePage() {
  const json = JSON.stringify(workspace.doc).replace(/</g, '\\u003c');
  const marker = /(<script type="application\/json" id="turnover-saved-state">)[\s\S]*?(<\/script>)/;
  const page = PRISTINE_PAGE.replace(marker, (_, open, close) => open + json + close);
  const stamp = new Date().toISOString().slice(0, 16).replace(/[:T]/g, '-');
  download(`turnover-${stamp}.html`, 'text/html', page);
}

/** Prints the analysis as a report: every result brought up to date, the
 *  folded parts unfolded, controls hidden by the print style. */
function printReport() {
  flushAll();
  window.print();
}

// The print dialog (the button, or the browser's own menu) shows the
// folded parts; they fold back afterwards.
let unfoldedForPrint = [];
window.addEventListener('beforeprint', () => {
  flushAll();
  unfoldedForPrint = [...document.querySelectorAll('main details:not([open]), #report-panel details:not([open])')].filter((d) => !d.classList.contains('screen-only'));
  for (const d of unfoldedForPrint) d.open = true;
  document.body.classList.add('printing');
});
window.addEventListener('afterprint', () => {
  for (const d of unfoldedForPrint) d.open = false;
  unfoldedForPrint = [];
  document.body.classList.remove('printing');
});

function isTextField(target) {
  if (!target) return false;
  if (target.isContentEditable) return true;
  if (target.tagName === 'TEXTAREA') return true;
  return target.tagName === 'INPUT' && !['checkbox', 'radio', 'button', 'submit', 'file', 'range', 'color'].includes(target.type);
}

// The same file open in two tabs keeps one shelf: when another tab saves
// a new version of the analysis shown here, say so and let the person
// choose, instead of letting the next edit here overwrite it unseen.
let otherVersion = null;
window.addEventListener('storage', (event) => {
  if (!workspace?.doc) return;
  if (event.key === 'turnover.analyses') {
    renderBar();
    return;
  }
  if (event.key !== `turnover.analysis.${workspace.doc.id}` || event.newValue === null) return;
  if (event.newValue === JSON.stringify(workspace.doc)) return;
  otherVersion = event.newValue;
  $('other-tab').hidden = false;
  $('other-tab-text').textContent = `“${workspace.doc.name}” was changed in another tab or window of this page. Your next change here would replace that version.`;
});

function wireOtherTab() {
  $('other-tab-open').addEventListener('click', () => {
    $('other-tab').hidden = true;
    if (otherVersion === null) return;
    let checked;
    try {
      checked = store.validateDocument(JSON.parse(otherVersion));
    } catch (error) {
      checked = { error: `it is not valid JSON (${error.message})` };
    }
    if (checked.error) refuse('The version from the other tab', checked.error, otherVersion);
    else workspace.dispatch({ type: 'open analysis', document: checked.document });
    otherVersion = null;
  });
  $('other-tab-keep').addEventListener('click', () => {
    $('other-tab').hidden = true;
    otherVersion = null;
    // Write this tab's version back, so both tabs now hold it.
    workspace.shelf.put(workspace.doc);
  });
}

function wireBar() {
  wireOtherTab();
  $('undo').addEventListener('click', () => workspace.undo());
  $('redo').addEventListener('click', () => workspace.redo());
  document.addEventListener('keydown', (event) => {
    if (!(event.ctrlKey || event.metaKey) || event.altKey || isTextField(event.target)) return;
    const key = event.key.toLowerCase();
    if (key === 'z' && !event.shiftKey) {
      event.preventDefault();
      workspace.undo();
    } else if ((key === 'z' && event.shiftKey) || key === 'y') {
      event.preventDefault();
      workspace.redo();
    }
  });
  const name = $('analysis-name');
  name.addEventListener('change', () => {
    const value = name.value.trim() || store.UNTITLED;
    workspace.dispatch({ type: 'rename', name: value });
  });
  $('analysis-list').addEventListener('change', (event) => {
    const id = event.target.value;
    if (id !== workspace.doc.id) openStored(id);
  });
  $('analysis-new').addEventListener('click', () => {
    workspace.dispatch({ type: 'new analysis', document: store.blankDocument() });
    info('');
  });
  $('start-fresh').addEventListener('click', () => {
    workspace.dispatch({ type: 'new analysis', document: store.blankDocument() });
    info('Started a new, empty analysis; the one restored before is still in the list (and Undo goes back to it).');
  });
  $('analysis-duplicate').addEventListener('click', () => {
    const doc = workspace.doc;
    workspace.dispatch({ type: 'duplicate analysis', document: { ...store.clone(doc), id: store.newId(), name: `${doc.name} (copy)`, created: new Date().toISOString() } });
  });
  $('analysis-delete').addEventListener('click', () => {
    const doc = workspace.doc;
    const other = workspace.shelf.index().find((e) => e.id !== doc.id);
    let next = null;
    if (other) {
      try {
        const checked = store.validateDocument(JSON.parse(workspace.shelf.load(other.id)?.text ?? 'null'));
        next = checked.document ?? null;
      } catch {
        next = null;
      }
    }
    workspace.dispatch({ type: 'delete analysis', document: next ?? store.blankDocument() });
    info(`Deleted “${doc.name}”. Undo brings it back.`);
  });
  $('export-session').addEventListener('click', exportSession);
  $('session-input').addEventListener('change', async (event) => {
    const file = event.target.files?.[0];
    event.target.value = '';
    if (!file) return;
    openImported(await file.text(), `The file ${file.name}`);
  });
  $('share-link').addEventListener('click', shareLink);
  $('download-refused').addEventListener('click', () => {
    if (refusedText !== null) download('turnover-refused-document.txt', 'text/plain', refusedText);
  });
  $('dismiss-problem').addEventListener('click', () => { $('document-problem').hidden = true; });
  $('save-page').addEventListener('click', savePage);
  $('print-report').addEventListener('click', printReport);
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

// ------------------------------------------------------------ the rate section

let rates = null;

const SPREADSHEET = /\.(xlsx|xlsm|ods|xls|xlsb)$/i;

/** A file's table as text, by the core's rules: a spreadsheet (.xlsx,
 *  .ods) through its one sheet reader (the command line's `--sheet`
 *  reader), the first sheet that holds anything, with the others named;
 *  any other file by the one decoding rule (UTF-8, UTF-16 with a
 *  byte-order mark, else Windows-1252). `{text, note}` or `{error}`; the
 *  note says everything not read as plain text. */
async function tableFromFile(file) {
  let bytes;
  try {
    bytes = new Uint8Array(await file.arrayBuffer());
  } catch {
    return { error: `Could not read the file ${file.name}.` };
  }
  if (!SPREADSHEET.test(file.name)) {
    const note = wasm_bindgen.decodeFileNote(bytes);
    return { text: wasm_bindgen.decodeFileText(bytes), note: note ? `${file.name}: ${note}.` : '' };
  }
  try {
    const names = wasm_bindgen.sheetNames(bytes);
    const filled = [];
    let first = null;
    for (const name of names) {
      const sheet = wasm_bindgen.sheetRead(bytes, name);
      if (!sheet.text.trim()) continue;
      filled.push(name);
      first ??= { name, ...sheet };
    }
    if (!first) return { error: `${file.name}: every sheet is empty.` };
    const empty = names.filter((n) => !filled.includes(n));
    /** The text and note of the sheet called `name`. */
    const sheetText = (name) => {
      const sheet = name === first.name ? first : wasm_bindgen.sheetRead(bytes, name);
      const parts = [`${file.name}: sheet “${name}” read (line N of the box is row N of the sheet)`];
      if (filled.length > 1) parts.push(`${filled.length - 1} other sheet${filled.length === 2 ? '' : 's'} with data: choose below`);
      if (empty.length) parts.push(`empty: ${empty.map((n) => `“${n}”`).join(', ')}`);
      parts.push(...sheet.notes);
      return { text: sheet.text, note: `${parts.join('; ')}.` };
    };
    return { ...sheetText(first.name), sheets: filled, sheet: first.name, sheetText };
  } catch (error) {
    if (coreFailed(error)) return { error: '' };
    return { error: `${file.name}: ${error?.message ?? error}` };
  }
}

/** Under a file's note: a choice of the workbook's sheets that hold data
 *  (shown only when there are two or more); choosing one reads it and
 *  hands its `{text, note}` to `apply`, as opening the file did. The
 *  workbook's bytes stay in this closure only until the next file. */
function showSheetChoice(holderId, read, apply) {
  const holder = $(holderId);
  holder.replaceChildren();
  holder.hidden = !(read.sheets?.length > 1);
  if (holder.hidden) return;
  const select = document.createElement('select');
  select.id = `${holderId}-select`;
  for (const name of read.sheets) select.append(new Option(name, name));
  select.value = read.sheet;
  select.addEventListener('change', () => {
    try {
      apply(read.sheetText(select.value));
    } catch (error) {
      if (!coreFailed(error)) apply({ error: `${select.value}: ${error?.message ?? error}` });
    }
  });
  const label = document.createElement('label');
  label.htmlFor = select.id;
  label.textContent = 'Sheet read: ';
  holder.append(label, select);
}

/** Reads a dropped or opened file into the rate section (or the section
 *  its table belongs to). */
async function readFile(file) {
  const read = await tableFromFile(file);
  if (read.error !== undefined) {
    if (read.error) showProblems([], read.error);
    return;
  }
  const apply = (sheet) => {
    if (sheet.error !== undefined) {
      if (sheet.error) showProblems([], sheet.error);
      return;
    }
    tableEntered('rates', sheet.text, 'rates-move-note');
    if (sheet.note) {
      $('rates-move-note').hidden = false;
      $('rates-move-note').textContent = `${sheet.note} ${$('rates-move-note').textContent}`.trim();
    }
  };
  showSheetChoice('rates-sheet-choice', read, apply);
  apply(read);
}

function wireRates() {
  $('data-input').addEventListener('input', () => tableEntered('rates', $('data-input').value, 'rates-move-note'));
  workspace.view((doc) => {
    if ($('data-input').value !== doc.rates.text) $('data-input').value = doc.rates.text;
  });
  bindField('substrate-unit', 'rates.substrate_unit');
  bindField('rate-unit', 'rates.rate_unit');
  bindField('enzyme', 'rates.enzyme');
  bindField('enzyme-unit', 'rates.enzyme_unit');
  bindField('protein', 'rates.protein');
  bindField('protein-unit', 'rates.protein_unit');
  bindField('molar-mass', 'rates.molar_mass');
  bindField('molar-mass-unit', 'rates.molar_mass_unit');
  bindField('rate-time', 'rates.rate_time');
  bindField('weighting', 'rates.weighting');
  bindField('interval-method', 'rates.interval_method');
  bindField('resamples', 'rates.resamples');
  bindField('seed', 'rates.seed');
  bindField('resample-by', 'rates.resample_by');
  bindField('assay-notes', 'notes');
  workspace.view((doc) => {
    $('bootstrap-options').hidden = doc.rates.interval_method !== 'bootstrap';
    const details = $('rate-laws');
    if (details.open !== doc.rates.compare_laws) details.open = doc.rates.compare_laws;
  });
  rates = derived({
    key: rateKey,
    compute: computeRates,
    stale: markStale,
  });
  // The comparison is part of the rate view: opening the panel is an edit.
  $('rate-laws').addEventListener('toggle', () => {
    const open = $('rate-laws').open;
    if (open !== workspace.doc.rates.compare_laws) workspace.dispatch({ type: 'set field', path: 'rates.compare_laws', value: open });
    showRateLaws();
  });
  $('analyse').addEventListener('click', flushAll);
  $('rates-stop').addEventListener('click', stopRatesOnRequest);
  $('rates-csv-constants').addEventListener('click', () => {
    rates.flush();
    if (state.result) downloadCsv('rate-constants', constantsRows([state.result.fit]));
  });
  $('rates-csv-points').addEventListener('click', () => {
    rates.flush();
    if (state.result) downloadCsv('rate-points', ratePointRows(state.result));
  });
  for (const field of ['enzyme', 'source', 'temperature', 'ph', 'buffer', 'method']) bindField(`assay-${field}`, `assay.${field}`);
  workspace.view((doc) => showChecklist(doc));
  $('load-demo').addEventListener('click', () => loadDemo('rates'));
  $('include-all').addEventListener('click', () => workspace.dispatch({ type: 'use all points', section: 'rates' }));
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
      rates.flush();
      if (!state.result) return;
      const kind = button.dataset.kind;
      exportFigure(kind, (options) => workbench.figureSvg(kind, options), () => workbench.constantsText());
    });
  }
  $('figure-panels').addEventListener('click', () => {
    rates.flush();
    if (!state.result) return;
    exportFigure('panels', (options) => workbench.figurePanelsSvg(JSON.stringify(['direct', 'residuals', 'lineweaver-burk']), options), () => workbench.constantsText());
  });
  for (const [id, key] of [['figure-width', 'width_mm'], ['figure-height', 'height_mm'], ['figure-font', 'font_pt'], ['figure-title', 'title'],
    ['figure-constants', 'constants'], ['figure-error-bars', 'error_bars'], ['figure-format', 'format'], ['figure-dpi', 'dpi']]) {
    bindField(id, `figure.${key}`);
  }
}

// ------------------------------------------------------------ start

/** The document the page opens with: a shared link, else the analysis
 *  saved inside this page file, else the last analysis kept in this
 *  browser, else the demo. A document that fails validation is refused
 *  with its reason and the next source is tried. */
async function openingDocument(shelf) {
  if (location.hash.startsWith('#doc=')) {
    let text = null;
    try {
      text = await store.fragmentText(location.hash);
    } catch (error) {
      refuse('The analysis in the link', `the link is damaged (${error?.message ?? error})`, location.hash);
    }
    history.replaceState(null, '', location.href.replace(/#.*$/, ''));
    if (text !== null) {
      const checked = store.readDocumentText(text, { classify: tableHome });
      if (checked.error) refuse('The analysis in the link', checked.error, text);
      else return { doc: { ...checked.document, id: store.newId() }, say: `Opened “${checked.document.name}” from a shared link; it is now kept in this browser too.` };
    }
  }
  const embedded = $('turnover-saved-state').textContent.trim();
  if (embedded && embedded !== 'null') {
    const checked = store.readDocumentText(embedded, { classify: tableHome });
    if (checked.error) refuse('The analysis saved in this page', checked.error, embedded);
    else {
      const saved = checked.document;
      const stored = shelf.load(saved.id);
      if (stored) {
        const later = store.validateDocument(JSON.parse(stored.text));
        if (later.document && JSON.stringify(later.document) !== JSON.stringify(saved)) {
          return { doc: later.document, say: `This page carries a saved analysis; your later changes to it, kept in this browser (${formatWhen(stored.updated)}), were restored.`, fresh: true };
        }
      }
      return { doc: saved, say: `Opened the analysis saved in this page${checked.migrated ? ' by an earlier version of Turnover, brought up to date' : ''}.`, saved: true };
    }
  }
  const currentId = shelf.currentId();
  if (currentId) {
    const stored = shelf.load(currentId);
    if (stored) {
      let checked;
      try {
        checked = store.validateDocument(JSON.parse(stored.text));
      } catch (error) {
        checked = { error: `it is not valid JSON (${error.message})` };
      }
      if (checked.error) refuse('The analysis kept in this browser', checked.error, stored.text);
      else return { doc: checked.document, say: `Restored “${checked.document.name}” as you left it (kept in this browser, last change ${formatWhen(stored.updated)}).`, fresh: true };
    }
  }
  return { doc: demoDocument('start'), say: '' };
}

// For tests and for scripting from the browser console.
Object.assign(window.turnover, {
  lastResult: () => plainResult(rates?.fresh() ? state.result : (rates?.flush(), state.result)),
  resultsText: () => resultsAsText(),
  lastError: () => state.error,
  pointPositions(kind) {
    const canvas = $(`plot-${kind}`);
    const sx = canvas.clientWidth / canvas.width;
    const sy = canvas.clientHeight / canvas.height;
    return [...unpackPositions(state.positions[kind])].map((p) => ({ row: p.row, x: p.x * sx, y: p.y * sy }));
  },
  analyse: flushAll,
  tableEntered: (...args) => tableEntered(...args),
  // A module's catch: true (and a restart under way) when the core aborted.
  coreFailed,
  onCoreRestart: (hook) => restartHooks.push(hook),
  // Section modules: derive results from the document, add demo parts and
  // copied text, bind fields. Each call takes effect at once.
  derived: (spec) => derived(spec),
  bindField: (...args) => bindField(...args),
  typed: (edit, coalesce) => typed(edit, coalesce),
  isTyping: () => typing,
  dispatch: (edit) => workspace.dispatch(edit),
  doc: () => workspace.doc,
  view: (render) => workspace.view(render),
  addDemo: (kind, part) => demoParts.set(kind, part),
  loadDemo,
  addText: (name, text) => sectionTexts.set(name, text),
  rateRequest: (doc) => rateRequest(doc ?? workspace.doc),
  undo: () => workspace.undo(),
  redo: () => workspace.redo(),
  history: () => ({ undo: workspace.past.length, redo: workspace.future.length }),
  // Small helpers the other page modules share, so that every section
  // formats numbers and downloads files the same way.
  ui: {
    plainResult,
    info,
    svgToPng,
    exportFigure,
    parameterRow,
    showReplicates,
    drawPlotList,
    seededNoise,
    estimateText,
    format: formatNumber,
    nearestPoint,
    csvText,
    constantsRows,
    downloadCsv,
    fitMethods,
    versionText,
    withUnit,
    typedNumber,
    readTyped,
    tableFromFile,
    showSheetChoice,
    fitAsText,
    cell(tag, text, attributes = {}) {
      const node = document.createElement(tag);
      for (const [key, value] of Object.entries(attributes)) node.setAttribute(key, value);
      node.textContent = text;
      return node;
    },
    download,
  },
  wasmBinary: () => wasmBinary,
  postCore,
  background: { lineCount, worth: worthBackground, section: sectionInBackground, resampleWords },
});

// The workspace exists before the core starts, so that every module can
// register its views while the page loads; the first render waits for the
// core.
{
  const shelf = new store.Shelf((message) => {
    $('storage-info').hidden = false;
    $('storage-info').textContent = message;
  });
  workspace = new store.Workspace({ shelf, onChange: renderBar });
}

// Every module of the page has run when this resolves. (This module runs
// before the event; readyState is already 'interactive' while the modules
// run, so it cannot tell.)
const contentLoaded = new Promise((resolve) => document.addEventListener('DOMContentLoaded', resolve, { once: true }));

// Other page modules wait on this before calling into the core.
window.turnover.ready = startWasm()
  .then(async () => {
    workbench = new wasm_bindgen.Workbench();
    $('version').textContent = wasm_bindgen.version();
    wireBar();
    wireRates();
    // Let the other modules register their sections and demos before the
    // first render: every module script has run by DOMContentLoaded, and the
    // core may be ready before the later modules have run.
    await contentLoaded;
    const opening = await openingDocument(workspace.shelf);
    workspace.start(opening.doc);
    info(opening.say, Boolean(opening.fresh));
    if (opening.saved) $('saved-info').textContent = 'opened a saved analysis';
    return wasm_bindgen;
  })
  .catch((error) => {
    $('status').dataset.state = 'error';
    $('status').textContent = `Turnover could not start its computing core: ${error?.message ?? error}`;
    console.error(error);
  });
