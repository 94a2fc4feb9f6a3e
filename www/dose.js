// Turnover page, dose-response: when the table is an inhibitor series (a
// header naming [I] and a response, and no [S]), fits the four-parameter
// logistic (IC50) or the Morrison tight-binding equation in the WebAssembly
// core, converts the IC50 into Ki by Cheng-Prusoff on request, and draws
// the curve. Every number comes from the core; this file only presents it.

/* global wasm_bindgen */

// Invented demo scenario (not measured data): the fictional kinase "Kin-9"
// with an imaginary inhibitor "compound 12", percent of the uninhibited
// rate at ten concentrations in duplicate. The values were made from the
// Morrison equation with [E]t = 0.2 µM, Ki_app = 0.5 µM and v0 = 100, plus
// hand-written scatter of one or two per cent, so the inhibitor is
// tight-binding at this enzyme concentration.
const DOSE_DEMO = `# Demo (invented data): kinase Kin-9 with compound 12, [E]t = 0.2 µM, [S] = 40 µM (Km 20 µM)
# percent of the rate without inhibitor, duplicates
[I] (µM)\t% activity
0\t100.8
0\t98.5
0.03\t97.0
0.03\t95.2
0.1\t85.2
0.1\t88.0
0.2\t78.0
0.2\t75.8
0.4\t59.7
0.4\t62.4
0.7\t46.5
0.7\t44.6
1\t35.5
1\t37.0
2\t21.8
2\t20.6
4\t12.0
4\t11.3
10\t5.0
10\t5.1
`;

const $ = (id) => document.getElementById(id);
let bench = null;
let lastResult = null;
let lastError = null;
let positions = [];

// Shared with the rest of the page (app.js).
const page = window.turnover;
const { format, cell, download } = page.ui;

// The options of this section as a request, or a message saying which
// field is wrong. Nothing unreadable is sent or silently dropped.
function options(d) {
  // Each field read by the core's rule for a lone number; a field that
  // cannot be read is named with the core's reason.
  const read = (text) => page.ui.readTyped(text);
  const morrison = d.model === 'morrison';
  const out = { model: morrison ? 'morrison' : 'ic50', enzyme: null, fixed_top: null, fixed_bottom: null, cheng_prusoff: null };
  if (morrison) {
    const { value, problem } = read(d.enzyme);
    if (problem) return { problem: `[E]t: ${problem}.` };
    if (value === null) return { problem: 'Enter [E]t, the total enzyme concentration in the unit of [I], for the tight-binding fit.' };
    if (value <= 0) return { problem: `[E]t: '${d.enzyme}' is not a positive number.` };
    out.enzyme = value;
    return { request: out };
  }
  for (const [fixed, text, key, what] of [[d.fix_top, d.top, 'fixed_top', 'ceiling'], [d.fix_bottom, d.bottom, 'fixed_bottom', 'floor']]) {
    if (!fixed) continue;
    const { value, problem } = read(text);
    if (problem || value === null) return { problem: `Fixed ${what}: ${problem ?? 'the field is empty; type the value to fix it at'}.` };
    out[key] = value;
  }
  const mechanism = d.cp_mechanism;
  if (mechanism) {
    const fields = [['[S]', read(d.cp_substrate)], ['Km', read(d.cp_km)], ['SE of Km', read(d.cp_km_se)]];
    const bad = fields.find(([, r]) => r.problem);
    if (bad) return { request: out, cpProblem: `${bad[0]}: ${bad[1].problem}.` };
    const [s, km, kmSe] = fields.map(([, r]) => r.value);
    if (s === null || km === null) return { request: out, cpProblem: 'Enter the assay’s [S] and the substrate’s Km (one unit for both) to convert the IC50 into Ki.' };
    out.cheng_prusoff = { mechanism, substrate: s, km, km_se: kmSe };
  }
  return { request: out };
}

function showParameters(fit) {
  const body = $('dose-parameters').tBodies[0];
  body.replaceChildren();
  for (const p of fit.parameters) body.append(page.ui.parameterRow(p));
  const method = fit.parameters[0]?.ci_method ?? 'asymptotic';
  $('dose-ci-heading').textContent = `${Math.round(fit.confidence_level * 100)}% interval (${method})`;
  const stats = $('dose-stats');
  stats.replaceChildren();
  for (const [key, label, value, text] of [
    ['n', 'points used', fit.n, String(fit.n)],
    ['dof', 'degrees of freedom', fit.dof, String(fit.dof)],
    ['sigma', 'residual SD', fit.sigma, format(fit.sigma)],
    ['r_squared', 'R²', fit.r_squared, fit.r_squared === null ? '—' : fit.r_squared.toFixed(4)],
  ]) {
    const item = cell('div', '', { 'data-stat': key, 'data-value': value === null ? '' : String(value) });
    item.append(cell('dt', label), cell('dd', text));
    stats.append(item);
  }
}

function showKi(result, cpProblem, mechanism) {
  const box = $('dose-ki');
  delete box.dataset.value;
  delete box.dataset.se;
  box.dataset.state = 'idle';
  if (result?.fit.model === 'morrison') {
    box.textContent = 'The Cheng-Prusoff conversion applies to the classical IC50 only; under tight binding use the Morrison fit’s Ki_app.';
    return;
  }
  if (cpProblem) {
    box.dataset.state = mechanism ? 'warn' : 'idle';
    box.textContent = cpProblem;
    return;
  }
  const ki = result?.fit.parameters.find((p) => p.name === 'Ki');
  if (!ki) {
    box.textContent = 'Choose a mechanism to convert the IC50 into Ki.';
    return;
  }
  box.dataset.state = 'ok';
  box.dataset.value = String(ki.value);
  box.dataset.se = String(ki.std_error ?? '');
  const unit = ki.unit ? ` ${ki.unit}` : '';
  const f = wasm_bindgen.formatEstimate(ki.value, ki.std_error ?? null, ki.ci_low ?? undefined, ki.ci_high ?? undefined);
  const interval = ki.ci_low === null || ki.ci_high === null ? '' : `; ${Math.round(result.fit.confidence_level * 100)}% interval ${f.low} to ${f.high}${unit} (${ki.ci_method})`;
  box.textContent = `Ki = ${f.value} ± ${f.se ?? '—'}${unit} (standard error)${interval}`;
}

function draw(result) {
  const canvas = $('plot-dose');
  try {
    positions = bench.draw(canvas.id);
    canvas.dataset.drawn = 'yes';
  } catch (error) {
    positions = [];
    canvas.dataset.drawn = 'no';
    console.warn(`dose plot: ${error?.message ?? error}`);
  }
  canvas.dataset.kind = result.plots[0]?.kind ?? '';
  $('dose-note').textContent = result.plots[0]?.note ?? '';
}

function clearPlot() {
  const canvas = $('plot-dose');
  const context = canvas.getContext('2d');
  context.fillStyle = '#ffffff';
  context.fillRect(0, 0, canvas.width, canvas.height);
  canvas.dataset.drawn = 'no';
  positions = [];
}

page.addText('Dose-response', () => {
  if (!lastResult || !section.fresh()) return [];
  const d = page.doc().dose;
  const lines = page.ui.fitAsText(`Dose-response fit, ${lastResult.fit.model}`, lastResult.fit);
  if (d.cp_mechanism) lines.push(`# Cheng-Prusoff inputs: mechanism ${d.cp_mechanism}, [S] ${d.cp_substrate}, Km ${d.cp_km}${d.cp_km_se ? ` ± ${d.cp_km_se}` : ''}`);
  lines.push(`# methods: ${$('dose-methods').textContent}`, '', '# points', ...pointRows(lastResult).map((row) => row.map((x) => (typeof x === 'boolean' ? (x ? 'yes' : 'no') : x)).join('\t')));
  return lines;
});

// What this section reads of the document: its own table, options and
// left-out points, and the rate section's fitting choices.
function doseInputs(doc) {
  const { request } = page.rateRequest(doc);
  return {
    text: doc.dose.text,
    dose: doc.dose,
    weighting: request.weighting,
    interval_method: request.interval_method,
    bootstrap: request.bootstrap,
  };
}

function analyseDose(doc) {
  stopJob();
  $('dose-rerun').hidden = true;
  const sent = doseInputs(doc);
  const results = $('dose-results');
  if (!sent.text.trim()) {
    results.hidden = true;
    lastResult = null;
    lastError = null;
    return;
  }
  bench ??= new wasm_bindgen.DoseBench();
  results.hidden = false;
  $('dose-ic50-options').hidden = sent.dose.model === 'morrison';
  $('dose-morrison-options').hidden = sent.dose.model !== 'morrison';
  const status = $('dose-status');
  const chosen = options(sent.dose);
  if (chosen.problem) {
    lastResult = null;
    lastError = chosen.problem;
    status.dataset.state = 'error';
    status.textContent = chosen.problem;
    clearShown();
    return;
  }
  const request = {
    text: sent.text,
    ...chosen.request,
    excluded_lines: [...sent.dose.excluded_lines],
    rate_time: sent.dose.rate_time || null,
    // The rate panel's weighting and interval choices apply here too
    // (weighting by an sd column is refused: these tables have none).
    weighting: sent.weighting,
    interval_method: sent.interval_method,
    bootstrap: sent.bootstrap,
  };
  if (page.background.worth(request, LINE_WORK)) {
    startJob(request, chosen, sent);
    return;
  }
  let result;
  try {
    result = bench.analyse(request);
  } catch (error) {
    lastResult = null;
    if (page.coreFailed(error)) return;
    showError(error?.message ?? String(error));
    return;
  }
  showAnalysis(result, chosen, sent);
}

// A series whose fit would hold the page for more than about a tenth of a
// second is fitted in the background (about 50 µs a line in the page's
// core): its lines count this many times against the page's limit.
const LINE_WORK = 3;

// Stops the fit under way in the background, if any.
let stopJob = () => {};

function showError(message) {
  lastResult = null;
  lastError = message;
  const status = $('dose-status');
  status.dataset.state = 'error';
  status.textContent = `No dose-response fit: ${lastError}`;
  clearShown();
}

function clearShown() {
  $('dose-results').classList.add('awaiting');
  $('dose-parameters').tBodies[0].replaceChildren();
  $('dose-warnings').replaceChildren();
  showKi(null, null);
  clearPlot();
  $('dose-replicates-box').hidden = true;
}

function startJob(request, chosen, sent) {
  lastResult = null;
  lastError = null;
  clearShown();
  stopJob = page.background.section({
    prefix: 'dose',
    section,
    bench,
    what: `Fitting a ${page.background.lineCount(request.text).toLocaleString('en')}-line series${page.background.resampleWords(request)}`,
    run: 'analyseDoseInWorker',
    request,
    show: (result) => showAnalysis(result, chosen, sent),
    fail: showError,
  });
}

function showAnalysis(result, chosen, sent) {
  $('dose-results').classList.remove('awaiting');
  lastResult = result;
  lastError = null;
  const status = $('dose-status');
  const fit = result.fit;
  const warned = fit.warnings.length > 0 || result.problems.length > 0;
  status.dataset.state = fit.converged ? (warned ? 'warn' : 'ok') : 'error';
  const what = fit.model === 'morrison' ? 'Morrison (tight-binding) fit' : 'Four-parameter logistic fit';
  const left = result.points.filter((p) => p.excluded).length;
  status.textContent = fit.converged
    ? `${what} to ${fit.n} points${left ? ` (${left} left out)` : ''}${warned ? ': read the warnings below' : ''}.`
    : `The fit ${fit.termination_text}. The numbers below are not a least-squares solution.`;
  $('dose-equation').textContent = fit.equation;
  showParameters(fit);
  const problems = result.problems.map((p) => `${p.column ? `line ${p.line}, column ${p.column}` : `line ${p.line}`}: ${p.message} (not used)`);
  $('dose-warnings').replaceChildren(...[...fit.warnings, ...problems, ...result.notes].map((w) => cell('li', w)));
  showKi(result, chosen.cpProblem, sent.dose.cp_mechanism);
  page.ui.showReplicates($('dose-replicates-box'), result.replicates, page.ui.withUnit('[I]', result.inhibitor_unit), null);
  const levels = new Set(result.points.filter((p) => !p.excluded).map((p) => p.i)).size;
  let methods = page.ui.fitMethods(fit, `Responses at ${levels} inhibitor concentrations`, null);
  const cp = chosen.request?.cheng_prusoff;
  if (cp && fit.parameters.some((p) => p.name === 'Ki')) {
    methods += ` Ki from the IC50 by Cheng & Prusoff (1973) for a ${cp.mechanism} inhibitor with [S] = ${cp.substrate} and Km = ${cp.km}${cp.km_se !== null ? ` ± ${cp.km_se}` : ' (taken as exact)'}, in one unit.`;
  }
  $('dose-methods').textContent = `${methods} ${page.ui.versionText()}`;
  $('dose-caution').textContent = result.caution;
  draw(result);
}

function toggleAt(canvas, event) {
  if (!lastResult || !section.fresh()) return;
  const best = page.ui.nearestPoint(canvas, positions, event);
  if (!best) return;
  page.dispatch({ type: 'toggle point', section: 'dose', line: lastResult.points.at(best.row).line });
}

const section = page.derived({
  key: (doc) => JSON.stringify(doseInputs(doc)),
  compute: (doc) => {
    analyseDose(doc);
    $('dose-panel').classList.toggle('no-data', !doc.dose.text.trim());
  },
  stale: (on) => $('dose-panel').classList.toggle('stale', on),
});

window.turnover.dose = {
  lastResult: () => page.ui.plainResult(section.fresh() ? lastResult : (section.flush(), lastResult)),
  lastError: () => lastError,
  pointPositions() {
    const canvas = $('plot-dose');
    const sx = canvas.clientWidth / canvas.width;
    const sy = canvas.clientHeight / canvas.height;
    return positions.map((p) => ({ row: p.row, x: p.x * sx, y: p.y * sy }));
  },
};

page.addDemo('dose', {
  name: 'Kin-9 with compound 12',
  build: (doc) => ({
    ...doc,
    demo: [...new Set([...doc.demo, 'dose'])],
    dose: { ...doc.dose, text: DOSE_DEMO, enzyme: '0.2', excluded_lines: [] },
  }),
});
$('load-dose-demo').addEventListener('click', () => page.loadDemo('dose'));
page.onCoreRestart(() => { bench = null; });
function pointRows(result) {
  const rows = [['line', page.ui.withUnit('i', result.inhibitor_unit), 'response', 'fitted', 'used']];
  for (const p of result.points) rows.push([p.line, p.i, p.y, p.fitted, !p.excluded]);
  return rows;
}
// The Cheng-Prusoff inputs travel with the constants they produced.
function constantsWithInputs(result, doc) {
  const rows = page.ui.constantsRows([result.fit]);
  const d = doc.dose;
  if (d.cp_mechanism && result.fit.parameters.some((p) => p.name === 'Ki')) {
    const blank = Array(rows[0].length - 3).fill(null);
    rows.push(['cheng-prusoff input', 'mechanism', d.cp_mechanism, ...blank]);
    rows.push(['cheng-prusoff input', '[S]', page.ui.typedNumber(d.cp_substrate), ...blank]);
    rows.push(['cheng-prusoff input', 'Km', page.ui.typedNumber(d.cp_km), page.ui.typedNumber(d.cp_km_se), ...blank.slice(1)]);
  }
  return rows;
}
$('dose-csv-constants').addEventListener('click', () => {
  section.flush();
  if (lastResult) page.ui.downloadCsv('dose-constants', constantsWithInputs(lastResult, page.doc()));
});
$('dose-csv-points').addEventListener('click', () => {
  section.flush();
  if (lastResult) page.ui.downloadCsv('dose-points', pointRows(lastResult));
});
$('dose-input').addEventListener('input', () => page.tableEntered('dose', $('dose-input').value, 'dose-move-note'));
page.view((doc) => {
  if ($('dose-input').value !== doc.dose.text) $('dose-input').value = doc.dose.text;
});
for (const [id, key] of [['dose-model', 'model'], ['dose-fix-top', 'fix_top'], ['dose-top', 'top'], ['dose-fix-bottom', 'fix_bottom'],
  ['dose-bottom', 'bottom'], ['dose-enzyme', 'enzyme'], ['dose-cp-mechanism', 'cp_mechanism'], ['dose-cp-substrate', 'cp_substrate'],
  ['dose-cp-km', 'cp_km'], ['dose-cp-km-se', 'cp_km_se'], ['dose-rate-time', 'rate_time']]) {
  page.bindField(id, `dose.${key}`);
}
$('plot-dose').addEventListener('click', (event) => toggleAt($('plot-dose'), event));
$('dose-include-all').addEventListener('click', () => page.dispatch({ type: 'use all points', section: 'dose' }));
$('dose-svg').addEventListener('click', () => {
  section.flush();
  if (!lastResult) return;
  page.ui.exportFigure(lastResult.plots[0]?.kind ?? 'dose', (options) => bench.figureSvg(options), () => bench.constantsText());
});
