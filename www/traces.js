// Time courses → initial rates: the page's trace panel. Every number shown
// comes from the WebAssembly core (turnover-wasm TraceBench); this file only
// draws it and turns clicks and drags into requests.

/* global wasm_bindgen */

const $ = (id) => document.getElementById(id);

const COLOURS = {
  ink: '#263238', muted: '#5f6b70', teal: '#00696e', tealSoft: 'rgba(0, 105, 110, 0.14)',
  amber: '#d68a14', brick: '#b23a2e', line: '#d9d6cf', paper: '#fcfcfa',
};

const page = window.turnover;

// What this section shows. The choices (windows, left-out traces, the
// conversion) live in the document; this is only the derived result and
// what is on screen.
const traceState = {
  bench: null,
  result: null,         // the analysis of the document's inputs `resultKey`
  resultKey: null,
  progress: null,       // the whole-curve fit of the inputs `progressKey`
  progressKey: null,
  selected: null,       // the trace shown large (a view choice, not saved)
  cellBoxes: [],        // plate grid hit boxes
  detailMap: null,      // detail plot coordinate map
  elapsed: null,
  engine: null,
};

// ------------------------------------------------------------ demo plate

// An invented assay: a dehydrogenase making NADH (A340 rises), Km 60 µM,
// 4 µM/min at 1 nM enzyme, read every 30 s for 30 min in 200 µL wells.
// Simulated here from the integrated rate law with seeded noise; not a
// measurement.
function demoPlate() {
  let seed = 20240611;
  const uniform = () => {
    seed = (seed * 1664525 + 1013904223) >>> 0;
    return (seed + 0.5) / 4294967296;
  };
  const normal = () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
  const km = 60;
  const vPerNm = 4;
  const eps = 6220;
  const path = 200 / (Math.PI * 3.2 * 3.2) / 10;
  const product = (t, s0, v) => {
    // S0 − S + Km ln(S0/S) = V t, by bisection.
    let lo = 0;
    let hi = s0;
    for (let k = 0; k < 80; k++) {
      const s = (lo + hi) / 2;
      if (s0 - s + km * Math.log(s0 / s) - v * t > 0) lo = s; else hi = s;
    }
    return s0 - (lo + hi) / 2;
  };
  const wells = [];
  const series = [10, 20, 40, 80, 160, 320, 640, 1280];
  for (const row of ['A', 'B']) series.forEach((s, i) => wells.push({ name: `${row}${i + 1}`, s, e: 1, role: 'sample' }));
  [0.5, 1, 2, 4].forEach((e, i) => wells.push({ name: `C${i + 1}`, s: 160, e, role: 'sample' }));
  wells.push({ name: 'D1', s: null, e: null, role: 'blank' });
  wells.push({ name: 'D2', s: null, e: null, role: 'blank' });
  wells.push({ name: 'D3', s: 160, e: 0, role: 'no-enzyme' });
  const lines = ['Demo plate (simulated)', 'Read: absorbance 340 nm, 200 µL per well', ''];
  lines.push(['time (min)', 'Temp (°C)', ...wells.map((w) => w.name)].join('\t'));
  const base = wells.map(() => 0.045 + 0.01 * uniform());
  for (let j = 0; j <= 60; j++) {
    const t = j * 0.5;
    const cells = [t.toFixed(1), (25 + 0.1 * normal()).toFixed(1)];
    wells.forEach((w, k) => {
      let a = base[k] + 0.0008 * normal();
      if (w.role !== 'blank' && w.s) a += (product(t, w.s, vPerNm * (w.e ?? 0) + 0.02) * 1e-6 * eps * path);
      cells.push(a > 3.2 ? 'OVRFLW' : a.toFixed(4));
    });
    lines.push(cells.join('\t'));
  }
  const layout = ['trace\tS (µM)\tE (nM)\trole', ...wells.map((w) => `${w.name}\t${w.s ?? ''}\t${w.e ?? ''}\t${w.role}`)];
  return { traces: lines.join('\n') + '\n', layout: layout.join('\n') + '\n', epsilon: eps, volume: 200, diameter: 6.4 };
}

// ------------------------------------------------------------ requests

/** The time-course request, from the document alone. A field that is not
 *  a number is named in `problem`; nothing unreadable is sent. */
function traceRequest(doc) {
  const t = doc.traces;
  // Each number field read by the core's rule for a lone number.
  const problems = [];
  const number = (text, label) => {
    const { value, problem } = page.ui.readTyped(text);
    if (problem) problems.push(`The ${label}: ${problem}.`);
    return value;
  };
  const mode = t.conversion;
  const request = {
    traces: t.text,
    layout: t.layout,
    epsilon: mode === 'epsilon' ? number(t.epsilon, 'ε') : null,
    path_cm: mode === 'epsilon' ? number(t.path, 'path length') : null,
    standard: mode === 'standard' ? t.standard : null,
    direction: t.direction,
    linear_limit: number(t.limit, 'linear limit'),
    max_conversion: number(t.max_conversion, 'conversion limit'),
    windows: Object.entries(t.windows).map(([trace, [start, end]]) => ({ trace, start, end })),
    excluded: [...t.excluded],
    fit_v0: t.fit_v0,
    rates_from_v0: t.rates_from_v0,
    report_time: t.report_time || null,
    // Which kinetic table of an export with several ('' = the first).
    block: t.block === '' ? null : Number(t.block),
  };
  if (problems.length) return { request, problem: problems.join(' ') };
  request.max_conversion = (request.max_conversion ?? 10) / 100;
  return { request, problem: null };
}

function setStatus(state, text) {
  $('traces-status').dataset.state = state;
  $('traces-status').textContent = text;
}

// ------------------------------------------------------------ the worker

// A plate of 384 traces takes the core a few hundred milliseconds, too long
// to hold the page still. Above this many characters of time-course table
// (about 5,000 readings, some tens of milliseconds of work) the analysis and
// the whole-curve fit run in a Web Worker, with a progress bar; below it
// they run at once on the page, which is quicker than a round trip. Both
// call the same core with the same request, so the numbers are the same.
const WORKER_CHARACTERS = 40000;

// The worker's own code. Its source is the wasm-bindgen glue (the page's
// #turnover-bindings script) followed by this function's text; it is given
// the WebAssembly bytes by message, so nothing is fetched.
function workerMain() {
  /* global wasm_bindgen */
  let bench = null;
  self.onmessage = (event) => {
    const job = event.data;
    try {
      if (job.kind === 'start') {
        wasm_bindgen.initSync({ module: job.module });
        bench = new wasm_bindgen.TraceBench();
        self.postMessage({ kind: 'ready' });
        return;
      }
      let last = -1;
      if (job.kind === 'analyse') {
        const text = bench.analyseJson(job.request, (done, total) => {
          const step = Math.floor((20 * done) / total);
          if (step !== last) {
            last = step;
            self.postMessage({ id: job.id, kind: 'progress', done, total });
          }
        });
        self.postMessage({ id: job.id, kind: 'done', text });
      } else if (job.kind === 'fit') {
        const text = bench.fitProgressJson((iteration) => self.postMessage({ id: job.id, kind: 'progress', iteration }));
        self.postMessage({ id: job.id, kind: 'done', text });
      }
    } catch (error) {
      // An abort of the core leaves this worker's module unusable: say so
      // and close; the page starts a fresh worker for the next job.
      const trapped = error instanceof WebAssembly.RuntimeError;
      self.postMessage({ id: job.id, kind: 'error', message: trapped ? `the computing core stopped on an internal error (${error.message}); try again` : error?.message ?? String(error), trapped });
      if (trapped) self.close();
    }
  };
}

const worker = {
  handle: null,     // the Worker, once it answered 'ready'
  failed: false,    // it could not be made: everything runs on the page
  pending: new Map(), // job id → {resolve, reject, onProgress}
  nextId: 1,
  starting: null,
};

function startWorker() {
  if (worker.starting) return worker.starting;
  const glue = $('turnover-bindings')?.textContent;
  const binary = window.turnover.wasmBinary?.();
  if (!glue || !binary || typeof Worker === 'undefined' || typeof Blob === 'undefined') {
    worker.failed = true;
    return Promise.resolve(null);
  }
  worker.starting = new Promise((resolve) => {
    let handle;
    const url = URL.createObjectURL(new Blob([`${glue}\n(${workerMain.toString()})();\n`], { type: 'text/javascript' }));
    const fail = (why) => {
      worker.failed = true;
      worker.handle = null;
      for (const job of worker.pending.values()) job.reject(new Error(`the background computation stopped: ${why}`));
      worker.pending.clear();
      resolve(null);
    };
    try {
      handle = new Worker(url);
    } catch (error) {
      URL.revokeObjectURL(url);
      fail(error?.message ?? String(error));
      return;
    }
    handle.onerror = (event) => fail(event.message || 'the worker failed to start');
    handle.onmessage = (event) => {
      const m = event.data;
      if (m.kind === 'ready') {
        URL.revokeObjectURL(url);
        worker.handle = handle;
        resolve(handle);
        return;
      }
      if (m.trapped) {
        // The next job gets a fresh worker.
        worker.handle = null;
        worker.starting = null;
        handle.terminate();
      }
      const job = worker.pending.get(m.id);
      if (!job) return;
      if (m.kind === 'progress') job.onProgress(m);
      else {
        worker.pending.delete(m.id);
        if (m.kind === 'done') job.resolve(m.text);
        else job.reject(new Error(m.message));
      }
    };
    window.turnover.postCore(handle);
  });
  return worker.starting;
}

async function inWorker(kind, request, onProgress) {
  const handle = await startWorker();
  if (!handle || worker.handle !== handle) return null;
  const id = worker.nextId++;
  return new Promise((resolve, reject) => {
    worker.pending.set(id, { resolve, reject, onProgress });
    handle.postMessage({ id, kind, request });
  });
}

function showBusy(text, fraction) {
  $('traces-busy').hidden = false;
  $('traces-busy-text').textContent = text;
  const bar = $('traces-progressbar');
  if (fraction === null) bar.removeAttribute('value'); else bar.value = fraction;
}

function hideBusy() {
  $('traces-busy').hidden = true;
}

// ------------------------------------------------------------ analysis

// Each analysis gets a number; a result that arrives after a newer request
// was made is not shown (the worker cannot be interrupted mid-plate).
let analysisCount = 0;
// The analysis under way: its key and a promise of its result.
let running = null;

function clearResults() {
  traceState.result = null;
  traceState.progress = null;
  traceState.progressKey = null;
  $('traces-problems').textContent = '';
  $('traces-notes').textContent = '';
  drawAll();
}

function markStale(on) {
  $('traces-panel').classList.toggle('stale', on);
  for (const id of ['traces-send', 'traces-progress']) $(id).disabled = on;
  if (on) setStatus('stale', 'Out of date: the inputs changed; finding the initial rates again…');
}

/** Analyses the document's time courses (key `key`). Small tables are
 *  analysed before this returns; large ones in the worker. Resolves with
 *  the result, or null on an error (shown in #traces-status). */
async function analyseTraces(doc, key) {
  const { request, problem } = traceRequest(doc);
  const number = ++analysisCount;
  if (!request.traces.trim()) {
    traceState.resultKey = key;
    clearResults();
    markStale(false);
    setStatus('idle', 'No time courses yet: paste a plate export and a layout, or load the demo plate.');
    return null;
  }
  if (problem) {
    traceState.resultKey = key;
    clearResults();
    markStale(false);
    setStatus('error', problem);
    return null;
  }
  markStale(true);
  const text = JSON.stringify(request);
  const started = performance.now();
  let json;
  let engine = 'page';
  try {
    if (request.traces.length > WORKER_CHARACTERS && !worker.failed) {
      showBusy('Finding initial rates…', 0);
      json = await inWorker('analyse', text, (m) => showBusy(`Finding initial rates: ${m.done} of ${m.total} traces`, m.done / m.total));
      engine = 'worker';
    }
    if (number !== analysisCount) return null;
    if (json === undefined || json === null) {
      engine = 'page';
      json = traceState.bench.analyseJson(text);
    }
  } catch (error) {
    if (number !== analysisCount) return null;
    hideBusy();
    if (page.coreFailed(error)) return null;
    traceState.resultKey = key;
    clearResults();
    markStale(false);
    setStatus('error', error?.message ?? String(error));
    return null;
  }
  if (number !== analysisCount) return null;
  hideBusy();
  traceState.result = JSON.parse(json);
  traceState.json = json;
  traceState.figures = null;
  traceState.resultKey = key;
  traceState.engine = engine;
  traceState.elapsed = performance.now() - started;
  traceState.progress = null;
  traceState.progressKey = null;
  markStale(false);
  const r = traceState.result;
  if (!traceState.selected || !r.traces.some((t) => t.name === traceState.selected)) {
    traceState.selected = (r.traces.find((t) => t.role === 'sample') ?? r.traces[0])?.name ?? null;
  }
  const flagged = r.traces.filter((t) => t.flags.some((f) => f !== 'excluded')).length;
  const rated = r.traces.filter((t) => t.rate !== null).length;
  setStatus(flagged ? 'warn' : 'ok',
    `${r.traces.length} traces read, ${rated} rates in ${r.rate_unit}; ${flagged} flagged${r.problems.length ? `; ${r.problems.length} cell(s) not used` : ''}.`);
  showProblems(r);
  if (engine === 'worker') {
    // A plate's drawing is split over tasks so that no one task holds the
    // page for long.
    const yieldToPage = () => new Promise((resolve) => setTimeout(resolve, 0));
    drawPlate();
    await yieldToPage();
    if (number !== analysisCount) return r;
    drawDetail();
    drawEnzymeCheck();
    await yieldToPage();
    if (number !== analysisCount) return r;
    drawProgress();
    await yieldToPage();
    if (number !== analysisCount) return r;
    drawTable();
  } else {
    drawAll();
  }
  return r;
}

function showProblems(r) {
  const box = $('traces-problems');
  box.textContent = '';
  const items = [...r.problems.map((p) => `line ${p.line}${p.column ? `, column ${p.column}` : ''}: ${p.message}`)];
  if (items.length) {
    const details = document.createElement('details');
    const summary = document.createElement('summary');
    summary.textContent = `${items.length} cell(s) or line(s) not used (blanks and overflow markers are never guessed)`;
    details.append(summary);
    const ul = document.createElement('ul');
    for (const text of items.slice(0, 400)) {
      const li = document.createElement('li');
      li.textContent = text;
      ul.append(li);
    }
    details.append(ul);
    box.append(details);
  }
  const notes = $('traces-notes');
  notes.textContent = '';
  for (const n of r.notes) {
    const li = document.createElement('li');
    li.textContent = n;
    notes.append(li);
  }
}

// ------------------------------------------------------------ drawing

function fmt(v, digits = 3) {
  return page.ui.format(v, digits);
}

// Every time-course plot is drawn by the core's one drawing path
// (turnover-wasm TraceFigures) from the analysis JSON, which may have come
// from the worker; the figures object is made once per analysis.
function figures() {
  if (!traceState.result) return null;
  if (!traceState.figures) {
    traceState.figures = new wasm_bindgen.TraceFigures(traceState.json);
    if (traceState.progress && traceState.progressKey === traceState.resultKey) traceState.figures.setProgressJson(traceState.progressJson);
  }
  return traceState.figures;
}

function blank(canvas, message = '') {
  const ctx = canvas.getContext('2d');
  ctx.fillStyle = '#ffffff';
  ctx.fillRect(0, 0, canvas.width, canvas.height);
  if (message) {
    ctx.fillStyle = COLOURS.muted;
    ctx.font = '13px system-ui, sans-serif';
    ctx.fillText(message, 16, 26);
  }
}

function drawPlate() {
  const canvas = $('plate-grid');
  const f = figures();
  traceState.cellBoxes = [];
  if (!f) {
    canvas.height = 60;
    blank(canvas);
    return;
  }
  const plate = JSON.parse(f.plateJson());
  // Plate geometry: 8 × 12 or 16 × 24 when the names are well names.
  canvas.width = 1160;
  canvas.height = Math.max(60, plate.rows * (plate.columns > 12 ? 46 : 70) + 24);
  traceState.cellBoxes = f.drawPlate('plate-grid', traceState.selected ?? null);
}

function selectedTrace() {
  return traceState.result?.traces.find((t) => t.name === traceState.selected) ?? null;
}

function drawDetail() {
  const canvas = $('trace-detail');
  const trace = selectedTrace();
  const r = traceState.result;
  const info = $('trace-info');
  info.textContent = '';
  traceState.detailMap = null;
  if (!trace) {
    blank(canvas);
    return;
  }
  const drawn = figures().draw('trace-detail', 'trace-detail', trace.name);
  const a = drawn.area;
  const X = (t) => a.left + ((t - a.x_min) / (a.x_max - a.x_min || 1)) * a.width;
  traceState.detailMap = { ...a, X, time: (x) => a.x_min + ((x - a.left) / a.width) * (a.x_max - a.x_min) };
  const parts = [
    ['Trace', `${trace.name} (${trace.role})`],
    ['[S]₀', trace.s === null ? '—' : `${fmt(trace.s, 4)} ${r.substrate_unit ?? ''}`],
    ['Rate', trace.rate === null ? '—' : `${page.ui.estimateText(trace.rate, trace.rate_se)} ${r.rate_unit}`],
    ['v0 (whole early trace)', trace.v0 === null || trace.v0 === undefined ? 'not fitted (tick “curvature-aware v0” to fit it)' : `${page.ui.estimateText(trace.v0, trace.v0_se)} ${r.rate_unit}${trace.v0_ci_low !== null ? `, 95% interval ${fmt(trace.v0_ci_low, 4)} to ${fmt(trace.v0_ci_high, 4)}` : ''}`],
    ['Window', trace.window_start === null ? '—' : `${fmt(trace.window_start)}–${fmt(trace.window_end)} ${r.time_unit}, ${trace.window_points} points, ${trace.manual_window ? 'set by hand' : 'automatic'}`],
    ['Used', trace.fraction_converted === null ? '—' : `${(100 * trace.fraction_converted).toFixed(1)} % of [S]₀`],
    ['Blank', trace.blanks_subtracted.length ? trace.blanks_subtracted.join(', ') : 'none'],
  ];
  const dl = document.createElement('dl');
  for (const [k, v] of parts) {
    const dt = document.createElement('dt');
    dt.textContent = k;
    const dd = document.createElement('dd');
    dd.textContent = v;
    dl.append(dt, dd);
  }
  info.append(dl);
  if (trace.messages.length) {
    const ul = document.createElement('ul');
    ul.className = 'warnings';
    for (const m of trace.messages) {
      const li = document.createElement('li');
      li.textContent = m;
      ul.append(li);
    }
    info.append(ul);
  }
  $('tr-exclude').textContent = page.doc().traces.excluded.includes(trace.name) ? 'Bring trace back' : 'Leave trace out';
}

function drawEnzymeCheck() {
  const canvas = $('enzyme-check');
  const r = traceState.result;
  const text = $('enzyme-check-text');
  text.textContent = '';
  const check = r?.enzyme_checks?.[0];
  if (!check) {
    blank(canvas);
    text.textContent = 'Needs samples at one [S] with three or more [E] (an E column in the layout).';
    return;
  }
  figures().draw('enzyme-check', 'rate-against-enzyme', '');
  text.textContent = `At [S] = ${fmt(check.s, 4)} ${r.substrate_unit ?? ''}: slope ${page.ui.estimateText(check.slope, check.slope_se)}, intercept ${page.ui.estimateText(check.intercept, check.intercept_se)} ${r.rate_unit} (${check.intercept_zero ? 'zero within its 95 % interval' : 'not zero within its 95 % interval'}), R² ${check.r_squared === null ? '—' : check.r_squared.toFixed(4)}${check.curvature_p !== null ? `, curvature p = ${fmt(check.curvature_p, 2)}` : ''}. ${check.messages.join(' ')}`;
}

function drawProgress() {
  const canvas = $('progress-plot');
  const body = $('progress-parameters').querySelector('tbody');
  body.textContent = '';
  const fit = traceState.progress;
  const r = traceState.result;
  if (!fit || !r || traceState.progressKey !== traceState.resultKey) {
    blank(canvas);
    $('progress-note').textContent = '';
    return;
  }
  figures().draw('progress-plot', 'progress-curves', '');
  for (const p of fit.summary.parameters.slice(0, 2)) body.append(page.ui.parameterRow(p));
  $('progress-note').textContent = `${fit.summary.converged ? 'Converged' : 'Did not converge'}; ${fit.curves.length} traces, n = ${fit.summary.n}, residual SD ${fmt(fit.summary.sigma, 3)} ${r.value_unit}. ${fit.summary.warnings.join(' ')} ${fit.notes.join(' ')} ${fit.caution}`;
}

function drawTable() {
  const body = $('trace-table').querySelector('tbody');
  body.textContent = '';
  const r = traceState.result;
  if (!r) return;
  for (const t of r.traces) {
    const tr = document.createElement('tr');
    tr.dataset.trace = t.name;
    tr.dataset.flags = t.flags.join(' ');
    if (t.rate !== null) tr.dataset.rate = t.rate;
    const cells = [t.name, t.role, t.s === null ? '—' : fmt(t.s, 4), fmt(t.rate, 4), fmt(t.rate_se, 2),
      t.window_start === null ? '—' : `${fmt(t.window_start)}–${fmt(t.window_end)}`,
      t.fraction_converted === null ? '—' : `${(100 * t.fraction_converted).toFixed(1)} %`, t.flags.join(', ')];
    for (const v of cells) {
      const td = document.createElement('td');
      td.textContent = v;
      tr.append(td);
    }
    tr.addEventListener('click', () => { traceState.selected = t.name; drawPlate(); drawDetail(); });
    body.append(tr);
  }
  $('trace-table-unit').textContent = `Rates in ${r.rate_unit}, windows in ${r.time_unit}.`;
}

// Other modules that present parts of the time-course result.
const resultHooks = [];

function drawAll() {
  drawPlate();
  drawDetail();
  drawEnzymeCheck();
  drawProgress();
  drawTable();
  showBlocks(traceState.result);
  for (const hook of resultHooks) hook(traceState.result);
}

/** The kinetic tables of an export with several (two wavelengths, two
 *  reads): a choice appears, listing each with its lines and size. */
function showBlocks(r) {
  const blocks = r?.blocks ?? [];
  const select = $('tr-block');
  $('tr-block-label').hidden = blocks.length < 2;
  const wanted = ['', ...blocks.map((b) => String(b.number))];
  if ([...select.options].map((o) => o.value).join() !== wanted.join()) {
    select.replaceChildren(new Option('the first', ''), ...blocks.map((b) => new Option(`${b.number}: ${b.title ?? 'untitled'} (lines ${b.header_line}–${b.last_line}, ${b.rows} readings of ${b.columns} traces)`, String(b.number))));
  }
  select.value = page.doc().traces.block;
}

// ------------------------------------------------------------ actions

// The key of what the analysis reads of the document (everything in the
// time-course section except the whole-curve switch).
// One key per version of `doc.traces` (edits share unchanged parts), so an
// edit elsewhere does not serialise a whole plate again.
const analysisKeys = new WeakMap();
function analysisKey(doc) {
  let key = analysisKeys.get(doc.traces);
  if (key === undefined) {
    key = JSON.stringify(traceRequest(doc));
    analysisKeys.set(doc.traces, key);
  }
  return key;
}

/** The analysis of the document as it is now: the shown one when it is
 *  current, else the one under way, else a new one. */
function currentAnalysis() {
  const key = analysisKey(page.doc());
  if (traceState.resultKey === key && !running) return Promise.resolve(traceState.result);
  if (running && running.key === key) return running.promise;
  return runAnalysis();
}

function runAnalysis() {
  clearTimeout(pendingTimer);
  pendingTimer = null;
  const doc = page.doc();
  const key = analysisKey(doc);
  const promise = analyseTraces(doc, key).then((r) => {
    if (running?.key === key) running = null;
    // The whole-curve fit follows the analysis when it is asked for.
    if (r && traceState.resultKey === key && page.doc().traces.whole_curve) ensureFit();
    return traceState.resultKey === key ? traceState.result : null;
  });
  running = { key, promise };
  return promise;
}

let pendingTimer = null;

/** Renders the section from the document: re-analyses when what the
 *  analysis reads has changed, fits whole curves when asked. */
function render(doc, previous, typing) {
  const key = analysisKey(doc);
  if (key !== traceState.resultKey && key !== running?.key) {
    if (typing) {
      markStale(true);
      clearTimeout(pendingTimer);
      pendingTimer = setTimeout(runAnalysis, 350);
    } else runAnalysis();
  } else if (key === traceState.resultKey && !running && doc.traces.whole_curve && traceState.progressKey !== key) {
    ensureFit();
  } else if (!doc.traces.whole_curve && traceState.progress) {
    traceState.progress = null;
    traceState.progressKey = null;
    drawProgress();
  } else if (traceState.result && previous && doc.traces.excluded !== previous.traces.excluded) {
    // The left-out button's words follow the document.
    drawDetail();
  }
  $('traces-progress').textContent = doc.traces.whole_curve ? 'Stop fitting whole curves' : 'Fit whole curves';
  $('traces-panel').classList.toggle('no-data', !doc.traces.text.trim());
  const preset = presets.find((p) => p.key === doc.traces.preset);
  $('tr-preset-source').textContent = preset ? `Source: ${preset.source}.` : '';
}

/** Sends the sample rates of the current analysis into the rate table:
 *  never those of an older one. */
async function sendRates() {
  const r = await currentAnalysis();
  if (!r) return;
  if (traceState.resultKey !== analysisKey(page.doc())) return;
  if (r.rate_links.length < 3) {
    setStatus('error', 'Fewer than three sample rates with [S] to send; check the layout.');
    return;
  }
  page.dispatch({ type: 'send rates', table: r.rate_table });
  page.analyse();
  $('data-panel').scrollIntoView({ behavior: 'instant', block: 'start' });
  setStatus('ok', `${r.rate_links.length} rates sent to the rate fit (traces ${r.rate_links.map((l) => l.trace).join(', ')}).`);
}

/** Asks for the whole-curve fit (an edit: it is part of the document) and
 *  resolves when the fit of the current analysis is shown. */
function fitWhole() {
  if (!page.doc().traces.whole_curve) page.dispatch({ type: 'fit whole curves', on: true });
  return ensureFit();
}

// The whole-curve fit under way: its key and promise.
let fitting = null;

/** Fits the integrated rate law to the whole curves of the current
 *  analysis, once per analysis, where that analysis ran (its bench holds
 *  it). */
async function ensureFit() {
  const r = await currentAnalysis();
  if (!r) return;
  const key = traceState.resultKey;
  if (traceState.progressKey === key) return;
  if (fitting && fitting.key === key) return fitting.promise;
  const promise = fitCurves(key).finally(() => {
    if (fitting?.key === key) fitting = null;
  });
  fitting = { key, promise };
  return promise;
}

async function fitCurves(key) {
  const number = analysisCount;
  let json = null;
  try {
    if (traceState.engine === 'worker') {
      showBusy('Fitting whole curves…', null);
      json = await inWorker('fit', null, (m) => showBusy(`Fitting whole curves: iteration ${m.iteration}`, null));
      if (json === null) {
        // The worker stopped after analysing: analyse again on the page.
        traceState.resultKey = null;
        traceState.engine = 'page';
        if (!(await analyseTraces(page.doc(), analysisKey(page.doc())))) return;
      }
    }
    if (number !== analysisCount) return;
    if (json === null) json = traceState.bench.fitProgressJson();
    if (number !== analysisCount) return;
    traceState.progress = JSON.parse(json);
    traceState.progressJson = json;
    traceState.figures = null;
    traceState.progressKey = key;
  } catch (error) {
    if (number !== analysisCount) return;
    traceState.progress = null;
    traceState.progressKey = key;
    setStatus('error', error?.message ?? String(error));
  }
  hideBusy();
  drawProgress();
}

function setWindow(name, start, end) {
  page.dispatch({ type: 'set window', trace: name, start, end });
  return currentAnalysis();
}

page.addDemo('plate', {
  name: 'dehydrogenase plate',
  build: (doc) => {
    const demo = demoPlate();
    return {
      ...doc,
      demo: [...new Set([...doc.demo, 'traces'])],
      traces: {
        ...doc.traces, text: demo.traces, layout: demo.layout, conversion: 'epsilon', preset: '', epsilon: String(demo.epsilon),
        volume: String(demo.volume), diameter: String(demo.diameter), path: wasm_bindgen.pathFromWell(demo.volume, demo.diameter).toFixed(4),
        windows: {}, excluded: [], whole_curve: false,
      },
    };
  },
});

// The chromophore presets with their sources, read once from the core.
let presets = [];

function wire() {
  presets = wasm_bindgen.tracePresets();
  const select = $('tr-preset');
  for (const p of presets) {
    const o = document.createElement('option');
    o.value = p.key;
    o.textContent = `${p.name}, ${p.wavelength_nm} nm: ${p.epsilon}`;
    o.title = p.source;
    select.append(o);
  }
  select.addEventListener('change', () => {
    const p = presets.find((q) => q.key === select.value);
    page.dispatch({ type: 'choose preset', preset: select.value, epsilon: p ? String(p.epsilon) : undefined });
  });
  for (const [id, key] of [['traces-input', 'text'], ['layout-input', 'layout'], ['tr-standard', 'standard']]) page.bindField(id, `traces.${key}`, { table: true });
  for (const [id, key] of [['tr-conversion', 'conversion'], ['tr-epsilon', 'epsilon'], ['tr-path', 'path'], ['tr-volume', 'volume'],
    ['tr-diameter', 'diameter'], ['tr-direction', 'direction'], ['tr-limit', 'limit'], ['tr-max-conversion', 'max_conversion']]) {
    page.bindField(id, `traces.${key}`);
  }
  page.bindField('tr-preset', 'traces.preset');
  page.bindField('tr-fit-v0', 'traces.fit_v0');
  page.bindField('tr-block', 'traces.block');
  // The time unit: its own edit, which rescales the windows set by hand
  // from the unit they were set in (the shown analysis's) to the new one.
  $('tr-report-time').addEventListener('change', () => {
    const value = $('tr-report-time').value;
    const doc = page.doc();
    const seconds = { s: 1, min: 60, h: 3600 };
    const from = traceState.result?.time_unit ?? doc.traces.report_time;
    const windows = Object.keys(doc.traces.windows).length > 0;
    const to = value || null;
    let factor = 1;
    if (windows && seconds[from] && to && seconds[to]) factor = seconds[from] / seconds[to];
    else if (windows && to !== from) page.ui.info('The windows set by hand keep their numbers: the unit they were set in is not known until the traces are read.');
    page.dispatch({ type: 'report time', value, factor });
  });
  page.view((doc) => {
    if ($('tr-report-time').value !== doc.traces.report_time) $('tr-report-time').value = doc.traces.report_time;
  });
  page.bindField('tr-rates-from-v0', 'traces.rates_from_v0');
  $('tr-well-path').addEventListener('click', () => {
    const t = page.doc().traces;
    const volume = page.ui.readTyped(t.volume).value;
    const diameter = page.ui.readTyped(t.diameter).value;
    try {
      page.dispatch({ type: 'set field', path: 'traces.path', value: wasm_bindgen.pathFromWell(volume ?? NaN, diameter ?? NaN).toFixed(4) });
    } catch (error) {
      setStatus('error', error?.message ?? String(error));
    }
  });
  $('traces-analyse').addEventListener('click', () => currentAnalysis());
  for (const button of document.querySelectorAll('button.trace-figure')) {
    button.addEventListener('click', async () => {
      const r = await currentAnalysis();
      if (!r) return;
      const kind = button.dataset.kind;
      const which = kind === 'trace-detail' ? traceState.selected ?? '' : '';
      if (kind === 'progress-curves' && traceState.progressKey !== traceState.resultKey) return;
      page.ui.exportFigure(kind === 'trace-detail' ? `trace-${which}` : kind, (options) => figures().figureSvg(kind, which, options));
    });
  }
  $('traces-csv-wells').addEventListener('click', async () => {
    const r = await currentAnalysis();
    if (r) page.ui.downloadCsv('rates-per-well', wellRows(r));
  });
  $('traces-csv-whole').addEventListener('click', () => {
    if (traceState.progress && traceState.progressKey === traceState.resultKey) page.ui.downloadCsv('whole-curve-fit', page.ui.constantsRows([traceState.progress.summary]));
  });
  $('traces-demo').addEventListener('click', () => page.loadDemo('plate'));
  $('traces-send').addEventListener('click', sendRates);
  $('traces-progress').addEventListener('click', () => {
    if (page.doc().traces.whole_curve) page.dispatch({ type: 'fit whole curves', on: false });
    else fitWhole();
  });
  $('tr-auto').addEventListener('click', () => {
    if (traceState.selected) page.dispatch({ type: 'automatic window', trace: traceState.selected });
  });
  $('tr-all').addEventListener('click', () => {
    const t = selectedTrace();
    if (!t || t.window_start === null) return;
    page.dispatch({ type: 'window for all', start: t.window_start, end: t.window_end });
  });
  $('tr-auto-all').addEventListener('click', () => page.dispatch({ type: 'all automatic' }));
  $('tr-exclude').addEventListener('click', () => {
    if (traceState.selected) page.dispatch({ type: 'toggle trace', trace: traceState.selected });
  });
  $('plate-grid').addEventListener('click', (event) => {
    const canvas = event.currentTarget;
    const rect = canvas.getBoundingClientRect();
    const x = (event.clientX - rect.left) * (canvas.width / rect.width);
    const y = (event.clientY - rect.top) * (canvas.height / rect.height);
    const hit = traceState.cellBoxes.find((b) => x >= b.x && x < b.x + b.w && y >= b.y && y < b.y + b.h);
    if (hit) {
      traceState.selected = hit.name;
      drawPlate();
      drawDetail();
    }
  });
  // Drag across the large plot to set the window of the shown trace.
  const detail = $('trace-detail');
  let dragFrom = null;
  const timeAt = (event) => {
    const rect = detail.getBoundingClientRect();
    const x = (event.clientX - rect.left) * (detail.width / rect.width);
    const m = traceState.detailMap;
    if (!m) return null;
    return m.time(x);
  };
  detail.addEventListener('mousedown', (event) => { dragFrom = timeAt(event); });
  detail.addEventListener('mousemove', (event) => {
    if (dragFrom === null) return;
    drawDetail();
    const m = traceState.detailMap;
    if (!m) return;
    const ctx = detail.getContext('2d');
    const to = timeAt(event);
    ctx.fillStyle = 'rgba(214, 138, 20, 0.2)';
    ctx.fillRect(m.X(Math.min(dragFrom, to)), m.top, Math.abs(m.X(to) - m.X(dragFrom)), m.height);
  });
  detail.addEventListener('mouseup', (event) => {
    if (dragFrom === null) return;
    const to = timeAt(event);
    const from = dragFrom;
    dragFrom = null;
    if (traceState.selected && to !== null && Math.abs(to - from) > 0) setWindow(traceState.selected, from, to);
    else drawDetail();
  });
}

const style = document.createElement('style');
style.textContent = `
#traces-panel .trace-inputs { display: grid; grid-template-columns: 3fr 2fr; gap: 0.8rem; }
#traces-panel .trace-inputs textarea { height: 9rem; }
#traces-panel label.stack { display: flex; flex-direction: column; font-size: 0.85rem; gap: 0.2rem; }
#traces-panel canvas { max-width: 100%; border: 1px solid var(--line); border-radius: 4px; background: #fff; }
#plate-grid { cursor: pointer; width: 100%; }
#trace-detail { cursor: col-resize; }
#traces-panel .trace-views { display: grid; grid-template-columns: minmax(0, 3fr) minmax(0, 2fr); gap: 1rem; align-items: start; }
#traces-panel .trace-views.two { grid-template-columns: 1fr 1fr; }
#trace-info dl { display: grid; grid-template-columns: auto 1fr; gap: 0.15rem 0.6rem; font-size: 0.85rem; margin: 0.3rem 0; }
#trace-info dt { color: var(--muted); }
#trace-info dd { margin: 0; }
#traces-status[data-state=error] { color: var(--brick); font-weight: 600; }
#traces-status[data-state=warn] { color: #8a5a00; }
#trace-table { border-collapse: collapse; font-size: 0.8rem; width: 100%; }
#trace-table th, #trace-table td { border-bottom: 1px solid var(--line); padding: 0.15rem 0.4rem; text-align: left; }
#trace-table tbody tr { cursor: pointer; }
#trace-table tbody tr:hover { background: var(--teal-soft); }
#traces-panel .table-scroll { max-height: 18rem; overflow: auto; content-visibility: auto; contain-intrinsic-size: auto 18rem; }
#traces-panel .flag-key { font-size: 0.8rem; color: var(--muted); }
#traces-panel .flag-key b { color: var(--brick); }
#traces-busy:not([hidden]) { display: flex; align-items: center; gap: 0.6rem; font-size: 0.85rem; color: var(--muted); }
#traces-busy progress { width: 16rem; accent-color: var(--teal); }
`;
document.head.append(style);

function start() {
  traceState.bench = new wasm_bindgen.TraceBench();
  page.onCoreRestart(() => {
    traceState.bench = new wasm_bindgen.TraceBench();
    traceState.resultKey = null;
    traceState.progressKey = null;
    running = null;
    fitting = null;
  });
  wire();
  page.view((doc, previous) => render(doc, previous, page.isTyping()));
  // Start the worker while the page is idle, so that the first large plate
  // does not wait for it.
  setTimeout(startWorker, 200);
}

/** Every trace's rate with its window and flags, at full precision. */
function wellRows(r) {
  const rows = [['trace', 'role', page.ui.withUnit('s0', r.substrate_unit), page.ui.withUnit('i', r.inhibitor_unit), page.ui.withUnit('e', r.enzyme_unit),
    page.ui.withUnit('rate', r.rate_unit), 'std_error', page.ui.withUnit('window_start', r.time_unit), page.ui.withUnit('window_end', r.time_unit),
    'window_points', 'window_by_hand', 'fraction_of_s0_used', 'left_out', 'flags']];
  for (const t of r.traces) {
    rows.push([t.name, t.role, t.s, t.i, t.e, t.rate, t.rate_se, t.window_start, t.window_end, t.window_points, t.manual_window, t.fraction_converted, t.excluded, t.flags.join(' ')]);
  }
  return rows;
}

page.addText('Time courses', () => {
  const r = traceState.result;
  if (!r || traceState.resultKey !== analysisKey(page.doc())) return [];
  const lines = wellRows(r).map((row) => row.map((x) => (typeof x === 'boolean' ? (x ? 'yes' : 'no') : x ?? '')).join('\t'));
  const fit = traceState.progress;
  if (fit && traceState.progressKey === traceState.resultKey) lines.push(...page.ui.fitAsText('Whole curves, integrated Michaelis-Menten', fit.summary));
  return lines;
});

// For tests and for scripting from the browser console.
window.turnoverTraces = {
  lastResult: () => traceState.result,
  // The time-course request of a document, and its key (for other
  // sections that read the same traces).
  request: (doc) => traceRequest(doc),
  requestKey: (doc) => analysisKey(doc),
  // `hook(result)` runs whenever a time-course result is drawn.
  onResult: (hook) => resultHooks.push(hook),
  lastProgress: () => traceState.progress,
  // True when the shown analysis is of the document's inputs as they are now.
  current: () => !running && traceState.resultKey === analysisKey(page.doc()),
  elapsed: () => traceState.elapsed,
  // 'page' or 'worker': where the last analysis ran.
  engine: () => traceState.engine,
  analyse: currentAnalysis,
  // Analyses the same inputs again (for timing a warm run).
  rerun: () => {
    traceState.resultKey = null;
    return runAnalysis();
  },
  fitWhole,
  setWindow,
  select(name) { traceState.selected = name; drawPlate(); drawDetail(); },
  cellBox(name) {
    const canvas = $('plate-grid');
    const b = traceState.cellBoxes.find((c) => c.name === name);
    if (!b) return null;
    const s = canvas.clientWidth / canvas.width;
    return { x: (b.x + b.w / 2) * s, y: (b.y + b.h / 2) * s };
  },
  detailX(time) {
    const m = traceState.detailMap;
    const canvas = $('trace-detail');
    return m ? m.X(time) * (canvas.clientWidth / canvas.width) : null;
  },
};

// app.js starts the WebAssembly core; wait for it.
window.turnover.ready.then((core) => {
  if (core) start();
});
