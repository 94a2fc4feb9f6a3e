// Turnover page, many curves: a table whose curve (or compound, sample,
// well) column groups its rows, every curve fitted with one model, and one
// results table with a small plot per curve, flags with their reasons, the
// plates' controls and Z′ when normalised, and a CSV of everything. The
// fits run a few curves per task, so the page stays responsive, with
// progress and a Stop button; a change of the inputs stops a run and
// starts a new one. Every number comes from the core (the command line's
// `fit --group-by` runs the same code).

/* global wasm_bindgen */

const $ = (id) => document.getElementById(id);
const page = window.turnover;
const { cell } = page.ui;

// Invented demo scenario (not measured data): a small screen of twelve
// imaginary compounds ("TX-01" to "TX-12") against a fictional kinase, ten
// concentrations in duplicate, % activity. Made from the four-parameter
// logistic with IC50s from 0.03 to 30 µM and Hill slopes near 1, plus
// seeded Gaussian scatter of 3 % (the generator below, seed 12); TX-11 is
// inactive (flat near 100 %) and TX-12 has a slope of 4, so some flags show.
function batchDemo() {
  const { normal } = page.ui.seededNoise(12);
  const doses = [0.001, 0.003, 0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30];
  const compounds = [
    [0.03, 1], [0.08, 1.1], [0.2, 0.9], [0.5, 1], [1, 1.2], [2, 0.8], [4, 1], [8, 1.1], [15, 1], [30, 0.9], [null, 1], [0.6, 4],
  ];
  const lines = ['# Demo (invented data): twelve imaginary compounds against a fictional kinase, % activity', 'compound\t[I] (µM)\t% activity'];
  compounds.forEach(([ic50, slope], k) => {
    const name = `TX-${String(k + 1).padStart(2, '0')}`;
    for (const i of doses) {
      for (let r = 0; r < 2; r++) {
        const y = ic50 === null ? 100 : 100 / (1 + (i / ic50) ** slope);
        lines.push(`${name}\t${i}\t${(y + 3 * normal()).toFixed(1)}`);
      }
    }
  });
  return `${lines.join('\n')}\n`;
}

// A run: its generation, the bench holding the curves, results so far.
let run = null;
let generation = 0;
const view = { sort: null, descending: false, filter: 'all', selected: null };

/** The request of a document's batch section, or a sentence saying which
 *  field cannot be read. */
function request(doc) {
  const b = doc.batch;
  const out = { text: b.text, group_by: b.group_by.trim(), model: b.model, normalise: b.normalise, fixed_top: null, fixed_bottom: null, weighting: b.weighting };
  for (const [fixed, text, key, what] of [[b.fix_top, b.top, 'fixed_top', 'ceiling'], [b.fix_bottom, b.bottom, 'fixed_bottom', 'floor']]) {
    if (!fixed) continue;
    const { value, problem } = page.ui.readTyped(text);
    if (problem || value === null) return { problem: `Fixed ${what}: ${problem ?? 'the field is empty; type the value to fix it at'}.` };
    out[key] = value;
  }
  return { request: out };
}

const keys = new WeakMap();
function batchKey(doc) {
  let key = keys.get(doc.batch);
  if (key === undefined) {
    key = JSON.stringify(doc.batch);
    keys.set(doc.batch, key);
  }
  return key;
}

function setStatus(state, text) {
  $('batch-status').dataset.state = state;
  $('batch-status').textContent = text;
}

function stop(reason) {
  if (!run || run.done) return;
  run.stopped = reason;
}

function start(doc) {
  generation += 1;
  if (run) run.stopped = run.stopped ?? 'replaced';
  run = null;
  view.selected = null;
  $('batch-detail').hidden = true;
  const text = doc.batch.text;
  $('batch-output').hidden = true;
  $('batch-stop').hidden = true;
  if (!text.trim()) return setStatus('idle', 'No table yet: paste one above, open a file, or load the demo.');
  const asked = request(doc);
  if (asked.problem) return setStatus('error', asked.problem);
  let bench;
  try {
    bench = new wasm_bindgen.BatchBench(JSON.stringify(asked.request));
  } catch (error) {
    if (page.coreFailed(error)) return;
    return setStatus('error', `No fits: ${error?.message ?? error}`);
  }
  const outline = JSON.parse(bench.outlineJson());
  run = { generation, bench, outline, results: [], done: false, stopped: null, started: performance.now() };
  showOutline(outline);
  $('batch-output').hidden = false;
  $('batch-stop').hidden = false;
  fitSome(run);
}

/** Fits the next curves of `r` one at a time until about 20 ms have
 *  passed, then adds their rows and yields to the page before the next
 *  task. One curve at a time because curves differ a hundredfold in cost
 *  (a flat or one-sided curve can take 30 ms where most take 1 ms), so a
 *  batch sized from the last one's average can overrun by far. */
function fitSome(r) {
  if (r !== run || r.stopped) return finish(r);
  const total = r.bench.count();
  const from = r.results.length;
  if (from >= total) return finish(r);
  const t0 = performance.now();
  try {
    do {
      const k = r.results.length;
      r.results.push(...JSON.parse(r.bench.fitJson(k, k + 1)));
    } while (r.results.length < total && performance.now() - t0 < 20);
  } catch (error) {
    if (page.coreFailed(error)) return;
    r.stopped = `an error: ${error?.message ?? error}`;
    return finish(r);
  }
  setStatus('busy', `Fitting: ${r.results.length} of ${total} curves…`);
  $('batch-progress').value = r.results.length / total;
  addRows(r, from);
  setTimeout(() => fitSome(r), 0);
}

function finish(r) {
  if (r !== run || r.done) return;
  r.done = true;
  $('batch-stop').hidden = true;
  const total = r.bench.count();
  const seconds = ((performance.now() - r.started) / 1000).toFixed(1);
  const flagged = r.results.filter((c) => c.flags.length).length;
  if (r.stopped) setStatus('warn', `Stopped (${r.stopped}) after ${r.results.length} of ${total} curves: the table shows those only.`);
  else setStatus(flagged ? 'warn' : 'ok', `${total} curves fitted in ${seconds} s; ${flagged} flagged (filter the table to see them).`);
  $('batch-progress').value = r.results.length / Math.max(total, 1);
  if (view.sort || view.filter !== 'all') showTable();
  else updateFilter(r);
}

function showOutline(outline) {
  const plates = $('batch-plates');
  plates.replaceChildren();
  if (outline.plates.length) {
    const table = cell('table', '', { class: 'small-table' });
    const head = table.createTHead().insertRow();
    for (const h of ['Plate', 'High controls (n, mean ± SD)', 'Low controls (n, mean ± SD)', 'Z′', 'Signal window', 'S/B', '']) head.append(cell('th', h));
    const body = table.createTBody();
    for (const p of outline.plates) {
      const tr = body.insertRow();
      tr.dataset.plate = p.plate;
      tr.dataset.zPrime = String(p.z_prime);
      const f = page.ui.format;
      const controls = (c) => `${c.n}, ${f(c.mean)} ± ${c.sd === null ? '—' : f(c.sd)}`;
      const maybe = (x) => (x === null ? '—' : f(x, 3));
      for (const x of [p.plate, controls(p.high), controls(p.low), maybe(p.z_prime), maybe(p.signal_window), maybe(p.signal_to_background), p.flag ?? '']) tr.append(cell('td', x));
    }
    plates.append(cell('h3', 'Plate quality (Zhang, Chung & Oldenburg 1999: Z′ below 0.5 flagged, common practice)'), table);
  }
  const problems = outline.problems.map((p) => `${p.column ? `line ${p.line}, column ${p.column}` : `line ${p.line}`}: ${p.message}`);
  $('batch-problems').replaceChildren(...problems.map((t) => cell('li', t)));
  $('batch-caution').textContent = outline.caution;
}

/** The constants shown as columns: the parameter names of the first
 *  fitted curve (every curve of one model has the same). */
function constantNames(results) {
  return results.find((c) => c.fit)?.fit.parameters.map((p) => p.name) ?? [];
}

function sortValue(c, key) {
  if (key === 'curve') return c.curve;
  if (key === 'flags') return c.flags.length;
  if (key === 'pic50') return c.pic50?.value ?? null;
  return c.fit?.parameters.find((p) => p.name === key)?.value ?? null;
}

function visible(results) {
  let rows = results.map((c, index) => ({ c, index }));
  if (view.filter === 'flagged') rows = rows.filter(({ c }) => c.flags.length);
  else if (view.filter === 'clean') rows = rows.filter(({ c }) => !c.flags.length);
  else if (view.filter !== 'all') rows = rows.filter(({ c }) => c.flags.some((f) => f.code === view.filter));
  if (view.sort) {
    const sign = view.descending ? -1 : 1;
    rows.sort((a, b) => {
      const x = sortValue(a.c, view.sort);
      const y = sortValue(b.c, view.sort);
      if (x === null || y === null) return x === null ? (y === null ? 0 : 1) : -1;
      return sign * (x < y ? -1 : x > y ? 1 : 0);
    });
  }
  return rows;
}

let observer = null;

/** The header (sortable columns) and the flag filter's choices. */
function showHeader(r) {
  const names = constantNames(r.results);
  const hasPic50 = r.results.some((c) => c.pic50);
  const key = JSON.stringify([names, hasPic50, view.sort, view.descending]);
  const table = $('batch-table');
  if (table.dataset.header === key) return;
  table.dataset.header = key;
  const head = table.tHead.rows[0];
  head.replaceChildren();
  const columns = [['curve', 'Curve'], ['plot', 'Plot'], ...names.map((n) => [n, n]), ...(hasPic50 ? [['pic50', 'pIC50']] : []), ['flags', 'Flags']];
  for (const [column, label] of columns) {
    const th = cell('th', label + (view.sort === column ? (view.descending ? ' ▼' : ' ▲') : ''), { 'data-key': column });
    if (column !== 'plot') {
      th.classList.add('sortable');
      th.title = 'Sort by this column (again: the other way)';
      th.addEventListener('click', () => {
        view.descending = view.sort === column ? !view.descending : false;
        view.sort = column;
        showTable();
      });
    }
    head.append(th);
  }
}

function updateFilter(r) {
  const filter = $('batch-filter');
  const codes = [...new Set(r.results.flatMap((c) => c.flags.map((f) => f.code)))];
  const wanted = ['all', 'flagged', 'clean', ...codes];
  if ([...filter.options].map((o) => o.value).join() !== wanted.join()) {
    filter.replaceChildren(new Option('all curves', 'all'), new Option('flagged curves', 'flagged'), new Option('curves without flags', 'clean'), ...codes.map((c) => new Option(`flag: ${c}`, c)));
    filter.value = wanted.includes(view.filter) ? view.filter : 'all';
  }
}

function row(r, c, index, names, hasPic50) {
  const tr = document.createElement('tr');
  tr.dataset.curve = c.curve;
  tr.dataset.flags = c.flags.map((f) => f.code).join(' ');
  tr.append(cell('td', c.curve));
  const plotCell = cell('td', '');
  const canvas = cell('canvas', '', { id: `batch-plot-${index}`, width: '240', height: '160', 'data-index': String(index) });
  plotCell.append(canvas);
  tr.append(plotCell);
  observer.observe(canvas);
  for (const name of names) {
    const p = c.fit?.parameters.find((q) => q.name === name);
    const td = cell('td', p ? page.ui.estimateText(p.value, p.std_error) : '—', { class: 'num' });
    if (p) td.dataset.value = String(p.value);
    tr.append(td);
  }
  if (hasPic50) tr.append(cell('td', c.pic50 ? page.ui.estimateText(c.pic50.value, c.pic50.std_error) : '—', { class: 'num' }));
  const flags = cell('td', c.error ? `no fit: ${c.error}` : c.flags.map((f) => f.code).join(', '));
  flags.title = c.flags.map((f) => f.reason).join('\n');
  tr.append(flags);
  tr.addEventListener('click', () => showDetail(index));
  return tr;
}

/** Appends the rows of the curves fitted since `from`, in table order,
 *  while the table is neither sorted nor filtered (else it is redrawn
 *  whole when the run ends). */
function addRows(r, from) {
  if (view.sort || view.filter !== 'all') return;
  const names = constantNames(r.results);
  const hasPic50 = r.results.some((c) => c.pic50);
  const header = $('batch-table').dataset.header;
  showHeader(r);
  if ($('batch-table').dataset.header !== header && from > 0) return showTable();
  if (from === 0) {
    $('batch-table').tBodies[0].replaceChildren();
    observer?.disconnect();
    observer = new IntersectionObserver(drawVisiblePlots, { rootMargin: '200px' });
  }
  const body = $('batch-table').tBodies[0];
  const fragment = document.createDocumentFragment();
  for (let index = from; index < r.results.length; index++) fragment.append(row(r, r.results[index], index, names, hasPic50));
  body.append(fragment);
  $('batch-count').textContent = `${r.results.length} of ${r.results.length} curves shown.`;
}


/** The whole table again, sorted and filtered as chosen. */
function showTable() {
  const r = run;
  if (!r) return;
  showHeader(r);
  updateFilter(r);
  const names = constantNames(r.results);
  const hasPic50 = r.results.some((c) => c.pic50);
  const body = $('batch-table').tBodies[0];
  observer?.disconnect();
  observer = new IntersectionObserver(drawVisiblePlots, { rootMargin: '200px' });
  const rows = visible(r.results);
  $('batch-count').textContent = `${rows.length} of ${r.results.length} curves shown.`;
  const fragment = document.createDocumentFragment();
  for (const { c, index } of rows) fragment.append(row(r, c, index, names, hasPic50));
  body.replaceChildren(fragment);
}

// Canvases scrolled into view wait here and are drawn a few per task
// (each is a refit of its curve and a drawing), so a screenful of small
// plots never holds the page for long.
const waiting = [];
let pumping = false;

function drawVisiblePlots(entries) {
  for (const entry of entries) {
    if (!entry.isIntersecting) continue;
    observer.unobserve(entry.target);
    waiting.push(entry.target);
  }
  if (!pumping && waiting.length) {
    pumping = true;
    setTimeout(drawWaiting, 0);
  }
}

function drawWaiting() {
  const r = run;
  const t0 = performance.now();
  while (waiting.length && performance.now() - t0 < 25) {
    const canvas = waiting.shift();
    if (!r || canvas.dataset.drawn || !canvas.isConnected) continue;
    const plot = r.bench.plotJson(Number(canvas.dataset.index));
    if (plot === 'null') {
      canvas.dataset.drawn = 'none';
      continue;
    }
    try {
      wasm_bindgen.drawPlotJson(canvas.id, plot);
      canvas.dataset.drawn = 'yes';
    } catch (error) {
      canvas.dataset.drawn = 'no';
      console.warn(`batch plot: ${error?.message ?? error}`);
    }
  }
  if (waiting.length) setTimeout(drawWaiting, 0);
  else pumping = false;
}

/** One curve in full: its plot, constants, flags with reasons and
 *  problems at the batch table's lines. */
function showDetail(index) {
  const r = run;
  const c = r?.results[index];
  if (!c) return;
  view.selected = index;
  $('batch-detail').hidden = false;
  $('batch-detail-title').textContent = `Curve ${c.curve}`;
  const body = $('batch-detail-parameters').tBodies[0];
  body.replaceChildren(...(c.fit?.parameters ?? []).map((p) => page.ui.parameterRow(p)));
  const items = [
    ...(c.error ? [`No fit: ${c.error}`] : []),
    ...c.flags.map((f) => `${f.code}: ${f.reason}`),
    ...c.problems.map((p) => `${p.column ? `line ${p.line}, column ${p.column}` : `line ${p.line}`}: ${p.message} (not used)`),
    ...(c.fit?.warnings ?? []),
  ];
  $('batch-detail-notes').replaceChildren(...items.map((t) => cell('li', t)));
  const plot = r.bench.plotJson(index);
  const canvas = $('batch-detail-plot');
  if (plot !== 'null') wasm_bindgen.drawPlotJson('batch-detail-plot', plot);
  canvas.dataset.curve = c.curve;
  $('batch-detail').scrollIntoView({ block: 'nearest' });
}

function csvRows() {
  const r = run;
  const names = constantNames(r.results);
  const rows = [['curve', 'n', ...names.flatMap((n) => [n, `${n}_se`, `${n}_low`, `${n}_high`]), 'pic50', 'pic50_se', 'pic50_low', 'pic50_high', 'converged', 'flags', 'error']];
  for (const c of r.results) {
    const values = names.flatMap((n) => {
      const p = c.fit?.parameters.find((q) => q.name === n);
      return p ? [p.value, p.std_error, p.ci_low, p.ci_high] : [null, null, null, null];
    });
    const pic = c.pic50;
    rows.push([c.curve, c.fit?.n ?? null, ...values, pic?.value ?? null, pic?.std_error ?? null, pic?.ci_low ?? null, pic?.ci_high ?? null, c.fit?.converged ?? false, c.flags.map((f) => f.code).join(' '), c.error ?? '']);
  }
  return rows;
}

const section = page.derived({
  key: batchKey,
  compute: (doc) => {
    start(doc);
    $('batch-panel').classList.toggle('no-data', !doc.batch.text.trim());
  },
  stale: (on) => $('batch-panel').classList.toggle('stale', on),
});

page.addText('Many curves', () => {
  if (!run || !section.fresh() || !run.done) return [];
  const rows = csvRows();
  return [`# Many curves: ${run.results.length} of ${run.bench.count()} curves fitted${run.stopped ? ` (stopped: ${run.stopped})` : ''}`, ...rows.map((row) => row.map((x) => x ?? '').join('\t'))];
});

$('batch-input').addEventListener('input', () => page.typed({ type: 'set table', path: 'batch.text', value: $('batch-input').value }, 'batch.text'));
page.view((doc) => {
  if ($('batch-input').value !== doc.batch.text) $('batch-input').value = doc.batch.text;
});
for (const [id, key] of [['batch-group-by', 'group_by'], ['batch-model', 'model'], ['batch-normalise', 'normalise'], ['batch-weighting', 'weighting'],
  ['batch-fix-top', 'fix_top'], ['batch-top', 'top'], ['batch-fix-bottom', 'fix_bottom'], ['batch-bottom', 'bottom']]) {
  page.bindField(id, `batch.${key}`);
}
$('batch-stop').addEventListener('click', () => stop('on request'));
$('batch-filter').addEventListener('change', () => { view.filter = $('batch-filter').value; showTable(); });
$('batch-csv').addEventListener('click', () => {
  section.flush();
  if (run?.done) page.ui.downloadCsv('curves', csvRows());
});
$('batch-detail-figure').addEventListener('click', () => {
  const r = run;
  if (!r || view.selected === null) return;
  const plot = r.bench.plotJson(view.selected);
  if (plot !== 'null') page.ui.exportFigure(`curve-${r.results[view.selected].curve}`, (options) => wasm_bindgen.plotFigureSvg(plot, options));
});
$('load-batch-demo').addEventListener('click', () => page.loadDemo('batch'));
page.addDemo('batch', {
  name: 'a twelve-compound screen',
  build: (doc) => ({ ...doc, demo: [...new Set([...doc.demo, 'batch'])], batch: { ...doc.batch, text: batchDemo(), model: 'ic50' } }),
});
page.onCoreRestart(() => { run = null; });

window.turnover.batch = {
  // The finished run's results (null while fitting or with no table).
  results: () => (run?.done && section.fresh() ? run.results : null),
  outline: () => run?.outline ?? null,
  running: () => Boolean(run && !run.done),
  stop: () => stop('on request'),
  showDetail,
};
