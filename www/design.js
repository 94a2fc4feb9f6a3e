// Turnover page, planning an experiment: from rough guesses of the
// constants, a noise level and the bench's limits, the core recommends
// concentrations, predicts the precision of every constant from the Fisher
// information, checks it by simulating the whole analysis, compares the
// person's own design, and writes a plate map and a pipetting table. The
// plan runs in a Web Worker of its own (an inhibition plan simulates every
// mechanism and takes seconds), with Stop; a change of the inputs stops a
// plan under way and starts the next. Every number comes from the core.

/* global wasm_bindgen */

const $ = (id) => document.getElementById(id);
const page = window.turnover;
const { cell } = page.ui;

/** The constants of each model, in the core's order and names. */
const CONSTANTS = {
  mm: ['Vmax', 'Km'],
  'substrate-inhibition': ['Vmax', 'Km', 'Ksi'],
  hill: ['Vmax', 'K0.5', 'nH'],
  competitive: ['Vmax', 'Km', 'Kic'],
  uncompetitive: ['Vmax', 'Km', 'Kiu'],
  mixed: ['Vmax', 'Km', 'Kic', 'Kiu'],
  noncompetitive: ['Vmax', 'Km', 'Ki'],
  ic50: ['floor', 'ceiling', 'IC50', 'steepness'],
};
const INHIBITION = new Set(['competitive', 'uncompetitive', 'mixed', 'noncompetitive']);

let lastResult = null;
let lastError = null;

/** The request, or a sentence naming the field that cannot be read. */
function request(doc) {
  const d = doc.design;
  const names = CONSTANTS[d.model];
  if (!names) return { problem: `Turnover cannot plan for the model “${d.model}”.` };
  const problems = [];
  const read = (text, label, { positive = false, whole = false } = {}) => {
    if (!text.trim()) return null;
    const { value, problem } = page.ui.readTyped(text);
    if (problem) problems.push(`${label}: ${problem}`);
    else if (positive && !(value > 0)) problems.push(`${label}: '${text}' is not a positive number`);
    else if (whole && !Number.isInteger(value)) problems.push(`${label}: '${text}' is not a whole number`);
    else return value;
    return null;
  };
  const guesses = [];
  for (const name of names) {
    const [value, low, high] = d.guesses[name] ?? ['', '', ''];
    const v = read(value, `guess of ${name}`, { positive: name !== 'floor' });
    if (v === null && !problems.length) problems.push(`Give a guess of ${name}`);
    const lo = read(low, `lowest ${name}`);
    const hi = read(high, `highest ${name}`);
    if ((lo === null) !== (hi === null)) problems.push(`Give both ends of the range of ${name}, or neither`);
    guesses.push({ name, value: v, low: lo, high: hi });
  }
  const list = (text, label) => {
    if (!text.trim()) return null;
    const values = text.split(/[;\s]+/).filter(Boolean).map((t) => read(t, label, { positive: false }));
    return values.some((v) => v === null) ? null : values;
  };
  const proposed = list(d.proposed, 'your concentrations');
  const proposedI = list(d.proposed_i, 'your inhibitor concentrations');
  const noise = read(d.noise, 'noise', { positive: true });
  const target = read(d.target, 'target precision', { positive: true });
  const out = {
    model: d.model,
    guesses,
    noise: { kind: d.noise_kind, level: d.noise_kind === 'proportional' ? (noise ?? 5) / 100 : noise ?? 0 },
    points: read(d.points, 'points', { positive: true, whole: true }) ?? 8,
    inhibitor_points: read(d.inhibitor_points, 'inhibitor levels', { positive: true, whole: true }) ?? 4,
    replicates: read(d.replicates, 'replicates', { positive: true, whole: true }) ?? 2,
    max_concentration: read(d.max_s, 'highest [S]', { positive: true }),
    max_inhibitor: read(d.max_i, 'highest [I]', { positive: true }),
    min_rate: read(d.min_rate, 'lowest measurable rate', { positive: true }),
    wells: null,
    target: d.target_parameter && target !== null ? { parameter: d.target_parameter, relative: target / 100, measure: 'se' } : null,
    proposed: proposed ? { concentrations: proposed, inhibitor_concentrations: proposedI ?? [] } : null,
    seed: read(d.seed, 'seed', { whole: true }) ?? 1,
    simulations: read(d.simulations, 'simulations', { whole: true }) ?? 200,
    substrate_unit: d.substrate_unit || null,
    inhibitor_unit: d.inhibitor_unit || null,
    rate_unit: d.rate_unit || null,
    bench: d.substrate_stock.trim() || d.inhibitor_stock.trim() ? {
      substrate_stock: read(d.substrate_stock, 'substrate stock', { positive: true }),
      inhibitor_stock: read(d.inhibitor_stock, 'inhibitor stock', { positive: true }),
      well_volume: read(d.well_volume, 'well volume', { positive: true }) ?? 200,
    } : null,
  };
  if (d.noise_kind === 'constant' && noise === null && !problems.length) problems.push('Give the noise level (a standard deviation in rate units)');
  if (problems.length) return { problem: `${problems.join('; ')}.` };
  return { request: out };
}

// ------------------------------------------------------------ the worker

// The plan's own worker: the wasm-bindgen glue (the page's
// #turnover-bindings script) and this function, given the WebAssembly
// bytes by message, so nothing is fetched. Stop ends it; the next plan
// starts a fresh one.
function workerMain() {
  /* global wasm_bindgen */
  self.onmessage = (event) => {
    const job = event.data;
    try {
      if (job.kind === 'start') {
        wasm_bindgen.initSync({ module: job.module });
        self.postMessage({ kind: 'ready' });
        return;
      }
      self.postMessage({ kind: 'done', id: job.id, text: wasm_bindgen.designExperiment(job.json) });
    } catch (error) {
      self.postMessage({ kind: 'error', id: job.id, message: error?.message ?? String(error) });
    }
  };
}

let worker = null;
let jobId = 0;

function stopWorker() {
  worker?.terminate();
  worker = null;
}

/** Runs the plan in the worker; resolves to the result's text. Falls back
 *  to the page itself where workers are not available. */
function plan(json) {
  const glue = $('turnover-bindings')?.textContent;
  const binary = page.wasmBinary?.();
  if (!glue || !binary || typeof Worker === 'undefined') return Promise.resolve(wasm_bindgen.designExperiment(json));
  stopWorker();
  const id = ++jobId;
  return new Promise((resolve, reject) => {
    const url = URL.createObjectURL(new Blob([`${glue}\n(${workerMain.toString()})();\n`], { type: 'text/javascript' }));
    const handle = new Worker(url);
    worker = handle;
    handle.onerror = (event) => reject(new Error(event.message || 'the background computation failed'));
    handle.onmessage = (event) => {
      const m = event.data;
      if (m.kind === 'ready') {
        URL.revokeObjectURL(url);
        handle.postMessage({ kind: 'plan', id, json });
      } else if (m.id === id) {
        if (m.kind === 'done') resolve(m.text);
        else reject(new Error(m.message));
        if (worker === handle) stopWorker();
      }
    };
    page.postCore(handle);
  });
}

// ------------------------------------------------------------ presenting

function setStatus(state, text) {
  $('design-status').dataset.state = state;
  $('design-status').textContent = text;
}

let running = null;

function analyse(doc) {
  lastError = null;
  stopWorker();
  renderGuesses(doc);
  const asked = request(doc);
  $('design-stop').hidden = true;
  if (asked.problem) {
    lastResult = null;
    $('design-output').hidden = true;
    return setStatus(doc.design.guesses && Object.keys(doc.design.guesses).length ? 'error' : 'idle', asked.problem);
  }
  const started = performance.now();
  const token = {};
  running = token;
  lastResult = null;
  $('design-output').classList.add('stale');
  $('design-stop').hidden = false;
  setStatus('busy', `Planning: predicting and simulating ${asked.request.simulations} experiments…`);
  plan(JSON.stringify(asked.request)).then((text) => {
    if (running !== token) return;
    running = null;
    lastResult = JSON.parse(text);
    $('design-stop').hidden = true;
    show(lastResult, doc);
    setStatus(lastResult.warnings.length ? 'warn' : 'ok', `Planned in ${((performance.now() - started) / 1000).toFixed(1)} s: ${lastResult.wells} wells${lastResult.warnings.length ? '; read the warnings below' : ''}.`);
  }, (error) => {
    if (running !== token) return;
    running = null;
    $('design-stop').hidden = true;
    lastError = error?.message ?? String(error);
    $('design-output').hidden = true;
    setStatus('error', `No plan: ${lastError}`);
  });
}

const pct = (x) => (x === null || x === undefined ? '—' : `${(100 * x).toFixed(1)} %`);

function show(r, doc) {
  $('design-output').hidden = false;
  $('design-output').classList.remove('stale');
  const unit = (u) => (u ? ` ${u}` : '');
  const conc = r.concentrations.map((c) => page.ui.format(c, 3)).join(', ');
  const lines = [`[S]: ${conc}${unit(r.units.substrate)} (${r.replicates} replicate${r.replicates === 1 ? '' : 's'} each)`];
  if (r.inhibitor_concentrations.length) lines.push(`[I]: ${r.inhibitor_concentrations.map((c) => page.ui.format(c, 3)).join(', ')}${unit(r.units.inhibitor)}`);
  if (r.varied === 'inhibitor') lines[0] = `[I]: ${conc}${unit(r.units.inhibitor)} (${r.replicates} replicate${r.replicates === 1 ? '' : 's'} each)`;
  $('design-concentrations').replaceChildren(...lines.map((t) => cell('p', t)));
  const table = (evaluation, body) => {
    body.replaceChildren();
    for (const p of evaluation.predicted) {
      const s = evaluation.simulated?.parameters.find((q) => q.name === p.name);
      const tr = body.insertRow();
      tr.dataset.param = p.name;
      tr.dataset.predictedSe = String(p.std_error);
      if (s) tr.dataset.simulatedSe = String(s.std_error);
      for (const x of [p.name, page.ui.format(p.value, 3), `${page.ui.format(p.std_error, 2)} (${pct(p.relative_se)})`, page.ui.format(p.ci_width, 2),
        s ? page.ui.format(s.std_error, 2) : '—', s ? page.ui.format(s.ci_width, 2) : '—', s ? pct(s.relative_bias) : '—', s ? pct(s.coverage) : '—']) tr.append(cell('td', x));
    }
  };
  table(r, $('design-precision').tBodies[0]);
  const extra = [];
  if (r.target) extra.push(`Chance that ${r.target.parameter} is determined to ±${(100 * r.target.relative).toFixed(0)} % (relative standard error): ${pct(r.simulated?.target_probability)} at the guesses${r.over_range?.target_probability !== undefined && r.over_range ? `, ${pct(r.over_range.target_probability)} over the guessed ranges` : ''}.`);
  if (r.mechanism) extra.push(`The mechanism comparison names the true mechanism in ${pct(r.mechanism.correct)} of simulated experiments (wrong ${pct(r.mechanism.wrong)}, undecided ${pct(r.mechanism.undecided)}).`);
  if (r.simulated) extra.push(`${r.simulated.n_simulations} simulated experiments (seed ${r.seed}); ${r.simulated.failed} fits failed.`);
  $('design-summary').replaceChildren(...extra.map((t) => cell('p', t)));
  const mine = $('design-proposed');
  mine.hidden = !r.proposed;
  if (r.proposed) {
    table(r.proposed, $('design-proposed-precision').tBodies[0]);
    const p = r.proposed;
    $('design-proposed-summary').textContent = `${p.wells} wells${r.target ? `; chance of the target: ${pct(p.simulated?.target_probability)}` : ''}${p.mechanism ? `; true mechanism named in ${pct(p.mechanism.correct)}` : ''}.`;
  }
  $('design-rules').replaceChildren(...r.rules.map((x) => cell('li', `${x.rule} (${x.source})`)));
  $('design-warnings').replaceChildren(...[...r.warnings, ...r.notes].map((w) => cell('li', w)));
  $('design-plate').textContent = r.plate_map?.text ?? '';
  const pip = $('design-pipetting');
  pip.hidden = !r.pipetting;
  if (r.pipetting) {
    const body = pip.querySelector('tbody');
    body.replaceChildren();
    for (const row of r.pipetting.rows) {
      const tr = body.insertRow();
      for (const x of [row.well, row.s === null ? '—' : page.ui.format(row.s, 3), row.i === null ? '—' : page.ui.format(row.i, 3), row.s_from, row.s_volume.toFixed(3), row.i_from, row.i_volume.toFixed(3), row.buffer_volume.toFixed(3)]) tr.append(cell('td', x));
    }
    const first = r.pipetting.intermediates.map((m) => `Make ${m.name} (${page.ui.format(m.concentration, 3)}): ${m.source_volume.toFixed(1)} µL of ${m.made_from} + ${m.buffer_volume.toFixed(1)} µL buffer.`);
    $('design-intermediates').replaceChildren(...first.map((t) => cell('li', t)));
    $('design-pipetting-rules').replaceChildren(...r.pipetting.rules.map((t) => cell('li', t)));
  }
  const plot = r.plots[0];
  if (plot) {
    wasm_bindgen.drawPlotJson('design-plot', JSON.stringify(plot));
    $('design-plot').dataset.drawn = 'yes';
    $('design-plot-note').textContent = plot.note ?? '';
  }
  $('design-caution').textContent = r.caution;
}

// ------------------------------------------------------------ the form

/** One row of inputs per constant of the chosen model: guess, lowest,
 *  highest. Rebuilt when the model changes; values live in the document. */
function renderGuesses(doc) {
  const names = CONSTANTS[doc.design.model] ?? [];
  const body = $('design-guesses').tBodies[0];
  if (body.dataset.model !== doc.design.model) {
    body.dataset.model = doc.design.model;
    body.replaceChildren();
    for (const name of names) {
      const tr = body.insertRow();
      tr.dataset.param = name;
      tr.append(cell('td', name));
      ['value', 'low', 'high'].forEach((part, k) => {
        const td = document.createElement('td');
        const input = cell('input', '', { type: 'text', inputmode: 'decimal', size: '7', id: `design-guess-${name}-${part}`, 'aria-label': `${name} ${part}` });
        input.addEventListener('input', () => {
          const current = page.doc().design.guesses;
          const triple = [...(current[name] ?? ['', '', ''])];
          triple[k] = input.value;
          page.typed({ type: 'set field', path: 'design.guesses', value: { ...current, [name]: triple } }, `design.guesses.${name}.${part}`);
        });
        td.append(input);
        tr.append(td);
      });
    }
    const target = $('design-target-parameter');
    target.replaceChildren(new Option('none', ''), ...names.map((n) => new Option(n, n)));
  }
  for (const name of names) {
    const triple = doc.design.guesses[name] ?? ['', '', ''];
    ['value', 'low', 'high'].forEach((part, k) => {
      const input = $(`design-guess-${name}-${part}`);
      if (input && input.value !== triple[k]) input.value = triple[k];
    });
  }
  $('design-target-parameter').value = doc.design.target_parameter;
  const inhibition = INHIBITION.has(doc.design.model);
  for (const id of ['design-inhibitor-fields', 'design-proposed-i-label']) $(id).hidden = !inhibition;
}

const section = page.derived({
  key: (doc) => JSON.stringify(doc.design),
  compute: analyse,
  stale: (on) => $('design-panel').classList.toggle('stale', on),
});

for (const [id, key] of [['design-model', 'model'], ['design-noise-kind', 'noise_kind'], ['design-noise', 'noise'], ['design-points', 'points'],
  ['design-inhibitor-points', 'inhibitor_points'], ['design-replicates', 'replicates'], ['design-max-s', 'max_s'], ['design-max-i', 'max_i'],
  ['design-min-rate', 'min_rate'], ['design-target-parameter', 'target_parameter'], ['design-target', 'target'], ['design-proposed-input', 'proposed'],
  ['design-proposed-i', 'proposed_i'], ['design-seed', 'seed'], ['design-simulations', 'simulations'], ['design-substrate-stock', 'substrate_stock'],
  ['design-inhibitor-stock', 'inhibitor_stock'], ['design-well-volume', 'well_volume'], ['design-substrate-unit', 'substrate_unit'],
  ['design-inhibitor-unit', 'inhibitor_unit'], ['design-rate-unit', 'rate_unit']]) {
  page.bindField(id, `design.${key}`);
}
$('design-stop').addEventListener('click', () => {
  if (!running) return;
  running = null;
  stopWorker();
  $('design-stop').hidden = true;
  setStatus('warn', 'Stopped: no plan for these inputs. Change an input, or choose fewer simulations, to plan again.');
});
$('design-csv').addEventListener('click', () => {
  section.flush();
  if (lastResult?.pipetting) page.ui.download(`turnover-pipetting.csv`, 'text/csv', lastResult.pipetting.csv);
});
$('design-map').addEventListener('click', () => {
  section.flush();
  if (lastResult?.plate_map) page.ui.download('turnover-plate-map.tsv', 'text/tab-separated-values', lastResult.plate_map.text);
});
$('design-figure').addEventListener('click', () => {
  const plot = lastResult?.plots[0];
  if (plot) page.ui.exportFigure('design-precision', (options) => wasm_bindgen.plotFigureSvg(JSON.stringify(plot), options));
});
$('load-design-demo').addEventListener('click', () => page.loadDemo('design'));
// The noise of the rate section's current fit: its residual SD, in rate
// units with equal weights, or as a share of the rate with weights 1/v²
// (the fit's sigma is then the relative SD). Other weightings are refused
// with the reason rather than converted.
$('design-noise-from-fit').addEventListener('click', () => {
  const result = page.lastResult();
  const note = $('design-noise-note');
  if (!result) {
    note.textContent = 'The rate section has no fit to take the noise from.';
    return;
  }
  const fit = result.fit;
  const sigma = fit.sigma;
  if (!(sigma > 0)) {
    note.textContent = 'The rate fit has no residual SD to take.';
    return;
  }
  if (fit.weighting === 'uniform') {
    page.dispatch({ type: 'set field', path: 'design.noise_kind', value: 'constant' });
    page.dispatch({ type: 'set field', path: 'design.noise', value: String(Number(sigma.toPrecision(3))) });
    note.textContent = `From the rate fit (equal weights, n = ${fit.n}): constant noise, SD ${sigma.toPrecision(3)} in its rate unit.`;
  } else if (fit.weighting === 'relative') {
    page.dispatch({ type: 'set field', path: 'design.noise_kind', value: 'proportional' });
    page.dispatch({ type: 'set field', path: 'design.noise', value: String(Number((100 * sigma).toPrecision(3))) });
    note.textContent = `From the rate fit (weights 1/v², n = ${fit.n}): proportional noise, ${(100 * sigma).toPrecision(3)} % of the rate.`;
  } else {
    note.textContent = `The rate fit is weighted ${fit.weighting}; the plan's noise models are constant or proportional, so choose equal or 1/v² weights there first.`;
  }
});
page.addDemo('design', {
  name: 'planning a Km measurement',
  build: (doc) => ({
    ...doc,
    demo: [...new Set([...doc.demo, 'design'])],
    design: { ...doc.design, model: 'mm', guesses: { Vmax: ['10', '', ''], Km: ['5', '2', '20'] }, target_parameter: 'Km', target: '10', proposed: '1 2 4 8 16 32', substrate_stock: '1000', substrate_unit: 'µM' },
  }),
});
page.addText('Experiment plan', () => {
  if (!lastResult || !section.fresh() || running) return [];
  const r = lastResult;
  const lines = [`# Experiment plan: ${r.equation}; ${r.wells} wells`, `# concentrations: ${r.concentrations.join(', ')}`, ['constant', 'guess', 'predicted_se', 'predicted_ci_width', 'simulated_se', 'simulated_ci_width', 'relative_bias', 'coverage'].join('\t')];
  for (const p of r.predicted) {
    const s = r.simulated?.parameters.find((q) => q.name === p.name);
    lines.push([p.name, p.value, p.std_error, p.ci_width, s?.std_error ?? '', s?.ci_width ?? '', s?.relative_bias ?? '', s?.coverage ?? ''].join('\t'));
  }
  return lines;
});

window.turnover.design = {
  lastResult: () => (running ? null : lastResult),
  lastError: () => lastError,
  running: () => Boolean(running),
};
