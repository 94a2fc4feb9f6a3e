// Turnover page, inhibitor series: when the table has an [I] column (or a
// matrix header of inhibitor concentrations), fits every mechanism
// globally in the WebAssembly core, and shows the ranking, the verdict,
// the constants and the family of plots. Every number comes from the core.

/* global wasm_bindgen */

const INHIBITION_PLOTS = [
  'inhibition-direct', 'inhibition-lineweaver-burk', 'inhibition-eadie-hofstee', 'inhibition-hanes-woolf',
  'dixon', 'cornish-bowden', 'slope-replot', 'intercept-replot',
];

// Invented demo scenario (not measured data): the fictional hydrolase
// Hyd-3 with an imaginary inhibitor "compound 7", duplicate rates at five
// [I] in matrix layout. The values were written by hand to follow mixed
// inhibition roughly (Kic of a few µM, Kiu a few times larger, Km near
// 0.8 mM, Vmax near 12 µM/min) with a few per cent scatter.
const INHIBITION_DEMO = `# Demo (invented data): Hyd-3 with compound 7, 30 °C, rates in µM/min
# matrix layout: [S] down the side, one column per inhibitor concentration
[S] (mM)\t0\t1 µM\t2.5 µM\t5 µM\t10 µM
0.1\t1.38\t1.01\t0.71\t0.50\t0.31
0.1\t1.31\t0.96\t0.75\t0.47\t0.33
0.25\t2.87\t2.15\t1.61\t1.09\t0.71
0.25\t2.99\t2.24\t1.55\t1.12\t0.69
0.5\t4.71\t3.58\t2.68\t1.89\t1.21
0.5\t4.55\t3.49\t2.79\t1.95\t1.25
1\t6.62\t5.18\t4.02\t2.93\t1.96
1\t6.81\t5.29\t3.92\t2.87\t1.90
2.5\t9.01\t7.38\t5.96\t4.53\t3.15
2.5\t8.84\t7.21\t6.07\t4.60\t3.09
5\t10.22\t8.64\t7.21\t5.73\t4.02
5\t10.41\t8.49\t7.09\t5.62\t4.11
`;

const $ = (id) => document.getElementById(id);
let bench = null;
let lastResult = null;
let lastError = null;
// Where each point of each plot was drawn, for click-to-exclude.
const positions = {};

// Shared with the rest of the page (app.js).
const page = window.turnover;
const { format, cell, download } = page.ui;
function showRanking(result) {
  const body = $('mechanism-ranking').tBodies[0];
  body.replaceChildren();
  for (const m of result.comparison.models) {
    const test = result.comparison.f_tests.find((t) => t.simpler === m.model && t.general === 'mixed');
    const constants = m.parameters.filter((p) => p.name.startsWith('K') && p.name !== 'Km')
      .map((p) => `${p.name} = ${format(p.value, 3)}`).join(', ');
    const row = document.createElement('tr');
    row.dataset.model = m.model;
    row.dataset.weight = String(m.akaike_weight ?? '');
    if (m.model === result.shown) row.className = 'preferred';
    row.append(
      cell('td', m.model),
      cell('td', constants),
      cell('td', format(m.rss)),
      cell('td', format(m.aicc, 5)),
      cell('td', m.delta_aicc === null ? '—' : m.delta_aicc.toFixed(1)),
      cell('td', m.akaike_weight === null ? '—' : m.akaike_weight.toFixed(3)),
      cell('td', test ? `F = ${format(test.f, 3)}, p = ${format(test.p_value, 2)}${test.outside ? ' (mixed outside its physical range: not a rejection)' : ''}` : '—'),
    );
    body.append(row);
  }
}

function showConstants(result) {
  const fit = result.fits.find((f) => f.model === result.shown) ?? result.fits[0];
  $('inhibition-shown').textContent = fit.model;
  $('inhibition-equation').textContent = fit.equation;
  const body = $('inhibition-parameters').tBodies[0];
  body.replaceChildren();
  for (const p of fit.parameters) body.append(page.ui.parameterRow(p));
  const method = fit.parameters[0]?.ci_method ?? 'asymptotic';
  $('inhibition-ci-heading').textContent = `95% interval (${method})`;
  const warnings = $('inhibition-warnings');
  warnings.replaceChildren();
  // Every problem the core reports is shown: an unreadable cell of a
  // matrix is one rate left out, and the person must see which.
  const problems = result.problems.map((p) => `${p.column ? `line ${p.line}, column ${p.column}` : `line ${p.line}`}: ${p.message} (not used)`);
  for (const w of [...problems, ...fit.warnings, ...result.notes]) warnings.append(cell('li', w));
}

function drawAll(result) {
  for (const kind of INHIBITION_PLOTS) {
    const canvas = $(`plot-${kind}`);
    try {
      positions[kind] = bench.draw(canvas.id, kind);
      canvas.dataset.drawn = 'yes';
    } catch (error) {
      positions[kind] = [];
      canvas.dataset.drawn = 'no';
      console.warn(`plot ${kind}: ${error?.message ?? error}`);
    }
    const plot = result.plots.find((p) => p.kind === kind);
    const note = document.querySelector(`[data-inhibition-note="${kind}"]`);
    if (note) note.textContent = plot ? plot.note : '';
  }
}

page.addText('Inhibitor series', () => {
  if (!lastResult || !section.fresh()) return [];
  const fit = lastResult.fits.find((f) => f.model === lastResult.shown) ?? lastResult.fits[0];
  const ranking = lastResult.comparison.models.map((m) => `# ${m.model}: AICc ${m.aicc}, Akaike weight ${m.akaike_weight}`);
  return [`# verdict: ${lastResult.comparison.verdict}`, ...ranking, ...page.ui.fitAsText(`Global fit, ${fit.model}`, fit),
    `# methods: ${$('inhibition-methods').textContent}`, '', '# points', ...pointRows(lastResult).map((row) => row.map((x) => (typeof x === 'boolean' ? (x ? 'yes' : 'no') : x)).join('\t'))];
});

// What this section reads of the document: its own table, unit and
// left-out points, and the rate section's fitting choices.
function inhibitionRequest(doc) {
  const { request } = page.rateRequest(doc);
  return {
    text: doc.inhibition.text,
    models: [],
    excluded_lines: [...doc.inhibition.excluded_lines],
    excluded_cells: doc.inhibition.excluded_cells.map((key) => key.split(':').map(Number)),
    substrate_unit: null,
    inhibitor_unit: null,
    rate_unit: doc.inhibition.rate_unit || null,
    rate_time: doc.inhibition.rate_time || null,
    // The rate panel's weighting and interval choices apply here too
    // (weighting by an sd column is refused: these tables have none).
    weighting: request.weighting,
    interval_method: request.interval_method,
    bootstrap: request.bootstrap,
  };
}

// A table whose four global fits would hold the page for more than about a
// tenth of a second is fitted in the background (the page's core takes
// about half a millisecond per line for the four mechanisms and their
// checks): its lines count this many times against the page's limit.
const LINE_WORK = 25;

// Stops the analysis under way in the background, if any.
let stopJob = () => {};

function analyseInhibition(doc) {
  stopJob();
  $('inhibition-rerun').hidden = true;
  const request = inhibitionRequest(doc);
  const results = $('inhibition-results');
  if (!request.text.trim()) {
    results.hidden = true;
    lastResult = null;
    lastError = null;
    return;
  }
  bench ??= new wasm_bindgen.InhibitionBench();
  results.hidden = false;
  if (page.background.worth(request, LINE_WORK)) {
    startJob(request);
    return;
  }
  let result;
  try {
    result = bench.analyse(request);
  } catch (error) {
    if (page.coreFailed(error)) {
      lastResult = null;
      return;
    }
    showError(error?.message ?? String(error));
    return;
  }
  showAnalysis(result);
}

function showError(message) {
  lastResult = null;
  lastError = message;
  const status = $('inhibition-status');
  status.dataset.state = 'error';
  status.textContent = `No inhibition analysis: ${lastError}`;
  clearShown();
}

/** Nothing of an earlier analysis stays on show. */
function clearShown() {
  $('inhibition-results').classList.add('awaiting');
  $('inhibition-verdict').textContent = '';
  $('mechanism-ranking').tBodies[0].replaceChildren();
  $('inhibition-parameters').tBodies[0].replaceChildren();
  $('inhibition-warnings').replaceChildren();
  $('inhibition-methods').textContent = '';
  for (const kind of INHIBITION_PLOTS) {
    const canvas = $(`plot-${kind}`);
    canvas.getContext('2d').clearRect(0, 0, canvas.width, canvas.height);
    canvas.dataset.drawn = 'no';
    positions[kind] = [];
  }
}

function startJob(request) {
  lastResult = null;
  lastError = null;
  clearShown();
  stopJob = page.background.section({
    prefix: 'inhibition',
    section,
    bench,
    what: `Fitting every mechanism to a ${page.background.lineCount(request.text).toLocaleString('en')}-line table${page.background.resampleWords(request)}`,
    run: 'analyseInhibitionInWorker',
    request,
    show: showAnalysis,
    fail: showError,
  });
}

function showAnalysis(result) {
  $('inhibition-results').classList.remove('awaiting');
  lastResult = result;
  lastError = null;
  const status = $('inhibition-status');
  const anyWarning = result.fits.some((f) => f.warnings.length > 0) || result.problems.length > 0;
  status.dataset.state = anyWarning ? 'warn' : 'ok';
  status.textContent = `${result.fits.length} mechanisms fitted globally to ${result.fits[0].n} rates at ${result.inhibitor_levels.length} inhibitor concentrations (${result.layout} table)${result.problems.length ? `; ${result.problems.length} cell(s) or line(s) not used, listed below` : ''}.`;
  const verdict = $('inhibition-verdict');
  verdict.dataset.preferred = result.comparison.preferred ?? '';
  verdict.textContent = `Verdict: ${result.comparison.verdict}.`;
  showRanking(result);
  showConstants(result);
  const shownFit = result.fits.find((f) => f.model === result.shown) ?? result.fits[0];
  $('inhibition-methods').textContent = `${page.ui.fitMethods(shownFit, `Rates at ${result.inhibitor_levels.length} inhibitor concentrations (${result.fits[0].n} rates; every mechanism fitted globally, the ${shownFit.model} fit shown)`, null)} ${page.ui.versionText()}`;
  drawAll(result);
}

// A click near a drawn point leaves that rate out (or brings it back) and
// refits every mechanism: in a long table by its input line, in a matrix by
// its cell, since a matrix line holds one rate per [I].
function toggleAt(kind, event) {
  if (!lastResult || !section.fresh()) return;
  const canvas = $(`plot-${kind}`);
  const best = page.ui.nearestPoint(canvas, positions[kind], event);
  if (!best) return;
  const point = lastResult.points.at(best.row);
  if (lastResult.layout === 'matrix') page.dispatch({ type: 'toggle cell', cell: `${point.line}:${point.column}` });
  else page.dispatch({ type: 'toggle point', section: 'inhibition', line: point.line });
}

const section = page.derived({
  key: (doc) => JSON.stringify(inhibitionRequest(doc)),
  compute: (doc) => {
    analyseInhibition(doc);
    $('inhibition-panel').classList.toggle('no-data', !doc.inhibition.text.trim());
  },
  stale: (on) => $('inhibition-panel').classList.toggle('stale', on),
});

window.turnover.inhibition = {
  lastResult: () => page.ui.plainResult(section.fresh() ? lastResult : (section.flush(), lastResult)),
  lastError: () => lastError,
  plots: INHIBITION_PLOTS,
  // Where the points of plot `kind` are, in CSS pixels of its canvas.
  pointPositions(kind) {
    const canvas = $(`plot-${kind}`);
    const sx = canvas.clientWidth / canvas.width;
    const sy = canvas.clientHeight / canvas.height;
    return (positions[kind] ?? []).map((p) => ({ row: p.row, x: p.x * sx, y: p.y * sy }));
  },
};

for (const kind of INHIBITION_PLOTS) {
  $(`plot-${kind}`).addEventListener('click', (event) => toggleAt(kind, event));
}
for (const button of document.querySelectorAll('button.inhibition-svg')) {
  button.addEventListener('click', () => {
    section.flush();
    if (!lastResult) return;
    const kind = button.dataset.kind;
    page.ui.exportFigure(kind, (options) => bench.figureSvg(kind, options), () => bench.constantsText());
  });
}
$('inhibition-include-all').addEventListener('click', () => page.dispatch({ type: 'use all points', section: 'inhibition' }));

page.addDemo('inhibition', {
  name: 'Hyd-3 with compound 7',
  build: (doc) => ({
    ...doc,
    demo: [...new Set([...doc.demo, 'inhibition'])],
    inhibition: { ...doc.inhibition, text: INHIBITION_DEMO, rate_unit: 'µM/min', excluded_lines: [], excluded_cells: [] },
  }),
});
page.onCoreRestart(() => { bench = null; });
function pointRows(result) {
  const u = result.units;
  const rows = [['line', 'column', page.ui.withUnit('s', u.substrate), page.ui.withUnit('i', u.inhibitor), page.ui.withUnit('v', u.rate), `fitted (${result.shown})`, 'used']];
  for (const p of result.points) rows.push([p.line, p.column, p.s, p.i, p.v, p.fitted, !p.excluded]);
  return rows;
}
$('inhibition-csv-constants').addEventListener('click', () => {
  section.flush();
  if (lastResult) page.ui.downloadCsv('inhibition-constants', page.ui.constantsRows(lastResult.fits));
});
$('inhibition-csv-points').addEventListener('click', () => {
  section.flush();
  if (lastResult) page.ui.downloadCsv('inhibition-points', pointRows(lastResult));
});
$('inhibition-input').addEventListener('input', () => page.tableEntered('inhibition', $('inhibition-input').value, 'inhibition-move-note'));
page.view((doc) => {
  if ($('inhibition-input').value !== doc.inhibition.text) $('inhibition-input').value = doc.inhibition.text;
});
page.bindField('inhibition-rate-unit', 'inhibition.rate_unit');
page.bindField('inhibition-rate-time', 'inhibition.rate_time');
$('load-inhibition-demo').addEventListener('click', () => page.loadDemo('inhibition'));
