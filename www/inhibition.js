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
let lastSent = null;
// Where each point of each plot was drawn, for click-to-exclude.
const positions = {};
// Left-out points: whole input lines (long layout, one rate per line) and
// single cells "line:column" (matrix layout, one rate per [I] on a line).
const excludedLines = new Set();
const excludedCells = new Set();
let excludedFor = null;

// Shared with the rest of the page (app.js).
const { format, cell, download } = window.turnover.ui;

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
      cell('td', test ? `F = ${format(test.f, 3)}, p = ${format(test.p_value, 2)}` : '—'),
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
  for (const p of fit.parameters) {
    const row = document.createElement('tr');
    row.dataset.param = p.name;
    row.dataset.value = String(p.value);
    row.dataset.se = String(p.std_error ?? '');
    const end = (x) => (x === null || x === undefined ? 'open' : format(x));
    const interval = p.ci_low === null && p.ci_high === null ? '—' : `${end(p.ci_low)} to ${end(p.ci_high)}`;
    row.append(cell('td', p.name), cell('td', format(p.value)), cell('td', format(p.std_error)), cell('td', interval), cell('td', p.unit ?? ''));
    body.append(row);
  }
  const method = fit.parameters[0]?.ci_method ?? 'asymptotic';
  $('inhibition-ci-heading').textContent = `95% interval (${method})`;
  const warnings = $('inhibition-warnings');
  warnings.replaceChildren();
  for (const w of [...fit.warnings, ...result.notes]) warnings.append(cell('li', w));
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

// The Michaelis-Menten panel fits [S] and v only: it cannot read a matrix
// table at all, and it pools every [I] of a long one. Say so there, instead
// of leaving a red "no fit" or a pooled fit unexplained.
function pointToThisSection() {
  const status = $('status');
  const text = 'This table is an inhibitor series: the global fits of every mechanism are in the inhibitor-series section below.';
  if (window.turnover.lastError()) {
    status.dataset.state = 'warn';
    status.textContent = text;
    $('input-problems').replaceChildren();
  } else {
    status.dataset.state = 'warn';
    status.textContent = `${status.textContent} Note: this fit pools every [I] and ignores the inhibitor. ${text}`;
  }
}

// A saved page brings back the rates that were clicked out; they are kept
// as long as the table is the one they were saved with.
window.turnover.keepState('inhibition', {
  save: () => ({ text: excludedFor, lines: [...excludedLines], cells: [...excludedCells] }),
  restore: (saved) => {
    excludedFor = saved.text;
    for (const line of saved.lines ?? []) excludedLines.add(line);
    for (const cellKey of saved.cells ?? []) excludedCells.add(cellKey);
  },
  text: () => {
    if (!lastResult) return [];
    const fit = lastResult.fits.find((f) => f.model === lastResult.shown) ?? lastResult.fits[0];
    const ranking = lastResult.comparison.models.map((m) => `# ${m.model}: AICc ${m.aicc}, Akaike weight ${m.akaike_weight}`);
    return [`# verdict: ${lastResult.comparison.verdict}`, ...ranking, ...window.turnover.ui.fitAsText(`Global fit, ${fit.model}`, fit)];
  },
});

function analyseInhibition(sent) {
  lastSent = sent;
  const results = $('inhibition-results');
  if (!wasm_bindgen.isInhibitionTable(sent.text)) {
    results.hidden = true;
    $('inhibition-hint').hidden = false;
    lastResult = null;
    lastError = null;
    return;
  }
  bench ??= new wasm_bindgen.InhibitionBench();
  if (excludedFor !== sent.text) {
    excludedLines.clear();
    excludedCells.clear();
    excludedFor = sent.text;
  }
  $('inhibition-hint').hidden = true;
  pointToThisSection();
  results.hidden = false;
  const status = $('inhibition-status');
  try {
    lastResult = bench.analyse({
      text: sent.text,
      models: [],
      excluded_lines: [...excludedLines],
      excluded_cells: [...excludedCells].map((key) => key.split(':').map(Number)),
      substrate_unit: sent.substrate_unit,
      inhibitor_unit: null,
      rate_unit: sent.rate_unit,
      // The rate panel's weighting and interval choices apply here too
      // (weighting by an sd column is refused: these tables have none).
      weighting: sent.weighting,
      interval_method: sent.interval_method,
      bootstrap: sent.bootstrap,
    });
    lastError = null;
  } catch (error) {
    lastResult = null;
    lastError = error?.message ?? String(error);
    status.dataset.state = 'error';
    status.textContent = `No inhibition analysis: ${lastError}`;
    $('inhibition-verdict').textContent = '';
    for (const kind of INHIBITION_PLOTS) $(`plot-${kind}`).dataset.drawn = 'no';
    return;
  }
  const result = lastResult;
  const anyWarning = result.fits.some((f) => f.warnings.length > 0) || result.problems.length > 0;
  status.dataset.state = anyWarning ? 'warn' : 'ok';
  status.textContent = `${result.fits.length} mechanisms fitted globally to ${result.fits[0].n} rates at ${result.inhibitor_levels.length} inhibitor concentrations (${result.layout} table).`;
  const verdict = $('inhibition-verdict');
  verdict.dataset.preferred = result.comparison.preferred ?? '';
  verdict.textContent = `Verdict: ${result.comparison.verdict}.`;
  showRanking(result);
  showConstants(result);
  drawAll(result);
}

// A click near a drawn point leaves that rate out (or brings it back) and
// refits every mechanism: in a long table by its input line, in a matrix by
// its cell, since a matrix line holds one rate per [I].
function toggleAt(kind, event) {
  if (!lastResult || !lastSent) return;
  const canvas = $(`plot-${kind}`);
  const box = canvas.getBoundingClientRect();
  const scaleX = canvas.width / canvas.clientWidth;
  const x = (event.clientX - box.left) * scaleX;
  const y = (event.clientY - box.top) * (canvas.height / canvas.clientHeight);
  let best = null;
  let bestDistance = 10 * scaleX;
  for (const p of positions[kind] ?? []) {
    const distance = Math.hypot(p.x - x, p.y - y);
    if (distance < bestDistance) {
      best = p;
      bestDistance = distance;
    }
  }
  if (!best) return;
  const point = lastResult.points[best.row];
  if (lastResult.layout === 'matrix') {
    const key = `${point.line}:${point.column}`;
    if (excludedCells.has(key)) excludedCells.delete(key);
    else excludedCells.add(key);
  } else if (excludedLines.has(point.line)) {
    excludedLines.delete(point.line);
  } else {
    excludedLines.add(point.line);
  }
  analyseInhibition(lastSent);
}


window.turnover.onAnalysed(analyseInhibition);
window.turnover.inhibition = {
  lastResult: () => lastResult,
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
    if (!lastResult) return;
    download(`turnover-${button.dataset.kind}.svg`, 'image/svg+xml', bench.svg(button.dataset.kind, 640, 460));
  });
}
$('inhibition-include-all').addEventListener('click', () => {
  excludedLines.clear();
  excludedCells.clear();
  if (lastSent) analyseInhibition(lastSent);
});

$('load-inhibition-demo').addEventListener('click', () => {
  $('data-input').value = INHIBITION_DEMO;
  $('rate-unit').value = 'µM/min';
  window.turnover.analyse();
});
