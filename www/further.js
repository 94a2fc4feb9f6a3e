// Turnover page, further questions: analyses that each answer one question
// from a table of their own (do constants differ between data sets; which
// two-substrate mechanism; a pH-rate profile; the temperature dependence).
// One section holds them: a chooser, the chosen question's table and
// options (each question keeps its own in the document, so switching loses
// nothing), and one presentation for every result: status and verdict,
// constants tables, the model comparison, problems with their line and
// column, plots drawn by the core's one drawing path, figure and CSV
// exports, methods text and the caution. Every number comes from the core.

/* global wasm_bindgen */

const $ = (id) => document.getElementById(id);
const page = window.turnover;
const { cell } = page.ui;

// Invented demo scenario (not measured data): the fictional esterase Est-5
// and its variant W84A, two replicate rates at seven [S]. Made from
// Michaelis-Menten with Km = 12 µM for both, Vmax = 3.0 (wild type) and
// 0.9 µM/min (W84A), with 3 % seeded Gaussian scatter (Python random,
// seed 7), so Vmax differs and Km does not.
const SETS_DEMO = `# Demo (invented data): esterase Est-5, wild type and variant W84A
set\t[S] (µM)\tv (µM/min)
wild type\t2\t0.425
wild type\t2\t0.435
wild type\t4\t0.745
wild type\t4\t0.743
wild type\t8\t1.167
wild type\t8\t1.192
wild type\t15\t1.722
wild type\t15\t1.688
wild type\t30\t2.210
wild type\t30\t2.159
wild type\t60\t2.530
wild type\t60\t2.514
wild type\t120\t2.591
wild type\t120\t2.797
W84A\t2\t0.131
W84A\t2\t0.130
W84A\t4\t0.214
W84A\t4\t0.213
W84A\t8\t0.350
W84A\t8\t0.355
W84A\t15\t0.505
W84A\t15\t0.499
W84A\t30\t0.653
W84A\t30\t0.630
W84A\t60\t0.757
W84A\t60\t0.759
W84A\t120\t0.802
W84A\t120\t0.860
`;

// Invented demo scenario (not measured data): kcat/Km of the fictional
// esterase Est-5 across pH, made from the two-ionisation bell with a
// pH-independent value 2.0×10⁵ M⁻¹ s⁻¹, pKa1 = 6.2 and pKa2 = 8.9, with 4 %
// seeded Gaussian scatter (Python random, seed 3).
const PH_DEMO = `# Demo (invented data): esterase Est-5, kcat/Km against pH
pH\tkcat/Km (M-1 s-1)
${[[5, 11920], [5.5, 34930], [6, 74450], [6.5, 138150], [7, 169010], [7.5, 181580], [8, 188480], [8.5, 143440], [9, 88320], [9.5, 41320], [10, 15380]].map((r) => r.join('\t')).join('\n')}
`;

// Invented demo scenario (not measured data): kcat of the fictional
// esterase Est-5 from 10 to 40 °C, made from the Eyring equation with
// ΔH‡ = 55 kJ/mol and ΔS‡ = −60 J/(mol·K), with 3 % seeded Gaussian
// scatter (Python random, seed 5).
const TEMPERATURE_DEMO = `# Demo (invented data): esterase Est-5, kcat against temperature
T (°C)\tkcat (s-1)
${[[10, 0.2986], [15, 0.4563], [20, 0.7254], [25, 0.9833], [30, 1.541], [35, 2.09], [40, 3.316]].map((r) => r.join('\t')).join('\n')}
`;

// Invented demo scenario (not measured data): the fictional transferase
// Trn-4 with its two substrates at a 5 × 5 grid, made from the ping-pong
// law with Vmax = 4 µM/min, KmA = 10 µM and KmB = 0.5 mM, with 3 % seeded
// Gaussian scatter (Python random, seed 11).
const BISUBSTRATE_DEMO = `# Demo (invented data): transferase Trn-4, rates in µM/min
[A] (µM)\t[B] = 0.1 mM\t[B] = 0.25 mM\t[B] = 0.5 mM\t[B] = 1 mM\t[B] = 2.5 mM
2\t0.350\t0.506\t0.588\t0.606\t0.619
5\t0.499\t0.811\t1.033\t1.101\t1.202
10\t0.584\t1.014\t1.395\t1.647\t1.813
20\t0.610\t1.231\t1.586\t1.953\t2.273
50\t0.647\t1.255\t1.799\t2.349\t2.881
`;

const WEIGHTS = [['uniform', 'equal (constant error)'], ['relative', '1/y² from the fitted curve (constant % error)'], ['poisson', '1/y from the fitted curve']];

/** The questions, each with its document section, options, the core call
 *  and how its result is shown. `run` returns the parsed result or throws
 *  the core's sentence. */
const KINDS = {
  sets: {
    label: 'Do constants differ between data sets?',
    hint: 'One table with a column naming each row’s data set (headed <code>set</code>, or name the column below) and the model’s columns: <code>[S]</code> and <code>v</code> for Michaelis-Menten; <code>[S]</code>, <code>[I]</code>, <code>v</code> for an inhibition mechanism; <code>[I]</code> and a response for the logistic. The sets are fitted together with each constant shared or separate, and the extra-sum-of-squares F test says which constants differ, with each set’s ratio to the reference set.',
    fields: [
      { key: 'by', label: 'Set column', type: 'text', size: 10, placeholder: 'set' },
      { key: 'model', label: 'Model', type: 'select', options: [['mm', 'Michaelis-Menten'], ['hill', 'Hill (cooperative)'], ['substrate-inhibition', 'substrate inhibition'], ['competitive', 'competitive inhibition'], ['uncompetitive', 'uncompetitive inhibition'], ['noncompetitive', 'noncompetitive inhibition'], ['mixed', 'mixed inhibition'], ['ic50', 'four-parameter logistic (IC50)'], ['morrison', 'tight binding (Morrison)']] },
      { key: 'enzyme', label: '[E]t (units of [I])', type: 'text', size: 6, placeholder: 'required', shownWhen: (d) => d.model === 'morrison' },
      { key: 'ceiling', label: 'fixed ceiling', type: 'text', size: 5, placeholder: 'fitted', shownWhen: (d) => d.model === 'ic50' },
      { key: 'floor', label: 'fixed floor', type: 'text', size: 5, placeholder: 'fitted', shownWhen: (d) => d.model === 'ic50' },
      { key: 'reference', label: 'Reference set', type: 'text', size: 12, placeholder: 'the first set' },
      { key: 'weighting', label: 'Weights', type: 'select', options: WEIGHTS },
    ],
    demo: { name: 'Est-5 wild type and W84A', text: SETS_DEMO },
    available: () => typeof wasm_bindgen.compareSets === 'function',
    run: (d) => {
      // Each number only where its model reads it, so a value left from
      // another model never reaches the fit.
      const number = (key, label, wanted) => {
        if (!wanted) return null;
        const { value, problem } = page.ui.readTyped(d[key]);
        if (problem) throw new Error(`${label}: ${problem}`);
        return value;
      };
      const enzyme = number('enzyme', '[E]t', d.model === 'morrison');
      if (d.model === 'morrison' && enzyme === null) throw new Error('The tight-binding (Morrison) model needs [E]t, in the units of [I]: type it in the options.');
      return JSON.parse(wasm_bindgen.compareSets(JSON.stringify({
        text: d.text, by: d.by.trim() || 'set', model: d.model, reference: d.reference.trim() || null,
        enzyme, fixed_top: number('ceiling', 'Fixed ceiling', d.model === 'ic50'), fixed_bottom: number('floor', 'Fixed floor', d.model === 'ic50'), weighting: d.weighting,
      })));
    },
    present: (r) => ({
      verdict: r.verdict,
      fits: r.sets.map((s) => ({ title: `${s.name} (own fit, n = ${s.n})`, fit: s.fit })),
      comparison: {
        head: ['Constants', 'Shared', 'RSS', 'dof', 'AICc', 'ΔAICc', 'F test against all separate'],
        rows: r.models.map((m) => [m.name, m.shared.length ? m.shared.join(', ') : 'none', num(m.rss), String(m.dof), num(m.aicc), num(m.delta_aicc),
          m.f_test ? fText(m.f_test) : '—']),
      },
      findings: r.constants.map((c) => c.text),
      methods: `Data sets (${r.sets.map((s) => s.name).join(', ')}) were fitted together to the ${r.model} model by weighted nonlinear least squares with each constant shared between the sets or separate; each shared constant was tested against all separate by the extra-sum-of-squares F test (p < 0.05); ratios to the reference set (${r.reference}) are from the all-separate fit with intervals exp(ln r ± t·SE(ln r)).`,
    }),
  },
  bisubstrate: {
    label: 'Two substrates: sequential, ordered or ping-pong?',
    hint: 'Rates over a grid of both substrates: long (<code>[A] (µM)</code>, <code>[B] (mM)</code>, <code>v (µM/min)</code>) or a matrix with [A] in the first column and one column per [B], its concentration in the heading (<code>[B] = 0.5 mM</code>). The sequential (ternary-complex), rapid-equilibrium ordered and ping-pong laws are fitted globally and compared (AICc, and the F test of each special case inside the sequential law); the double-reciprocal lines at each [B] are drawn from the global fit (intersecting for a ternary complex, parallel for ping-pong).',
    fields: [
      { key: 'rate_unit', label: 'v unit', type: 'select', options: [['', 'as in the header'], ['µM/min', 'µM/min'], ['µM/s', 'µM/s'], ['nM/min', 'nM/min'], ['nM/s', 'nM/s'], ['mM/min', 'mM/min']] },
      { key: 'enzyme', label: '[E]t', type: 'text', size: 6, placeholder: 'optional' },
      { key: 'enzyme_unit', label: 'unit', type: 'select', options: [['nM', 'nM'], ['pM', 'pM'], ['µM', 'µM']] },
      { key: 'weighting', label: 'Weights', type: 'select', options: [['relative', '1/v² from the fitted curve (constant % error)'], ['uniform', 'equal (constant error)'], ['poisson', '1/v from the fitted curve']] },
    ],
    demo: { name: 'Trn-4 two-substrate grid', text: BISUBSTRATE_DEMO, fields: { rate_unit: 'µM/min' } },
    available: () => typeof wasm_bindgen.bisubstrate === 'function',
    run: (d) => {
      const { value: enzyme, problem } = page.ui.readTyped(d.enzyme);
      if (problem) throw new Error(`[E]t: ${problem}`);
      return JSON.parse(wasm_bindgen.bisubstrate(JSON.stringify({
        text: d.text, weighting: d.weighting, rate_unit: d.rate_unit || null, enzyme, enzyme_unit: enzyme === null ? null : d.enzyme_unit,
      })));
    },
    present: (r) => ({
      verdict: r.comparison.verdict,
      fits: r.fits.map((fit) => ({ title: fit.model === r.shown ? `${fit.model} (drawn)` : fit.model, fit })),
      comparison: comparisonTable(r.comparison),
      methods: `Initial rates at ${r.a_levels.length} concentrations of A and ${r.b_levels.length} of B were fitted globally by weighted nonlinear least squares to the sequential (ternary-complex) law v = Vmax·[A][B]/(KiA·KmB + KmB·[A] + KmA·[B] + [A][B]), its rapid-equilibrium ordered case (KmA → 0) and the ping-pong law (KiA → 0); models were compared by AICc and the extra-sum-of-squares F test of each special case inside the sequential law.`,
    }),
  },
  ph: {
    label: 'pH-rate profile: pKa values',
    hint: 'A <code>pH</code> column and a rate or rate constant (<code>kcat</code>, <code>kcat/Km</code>, <code>k</code> or <code>v</code>, with its unit in the heading). One ionisation (a rising or a falling limb) and the bell-shaped two-ionisation model are fitted directly to the values (not to their logarithms) and compared; plotted as log10 of the value against pH with the slope +1, 0 and −1 asymptotes.',
    fields: [
      { key: 'column', label: 'Value column', type: 'text', size: 10, placeholder: 'found by name' },
      { key: 'weighting', label: 'Weights', type: 'select', options: [['relative', '1/y² from the fitted curve (constant % error)'], ['uniform', 'equal (constant error)'], ['poisson', '1/y from the fitted curve']] },
    ],
    demo: { name: 'Est-5 kcat/Km against pH', text: PH_DEMO },
    available: () => typeof wasm_bindgen.phProfile === 'function',
    run: (d) => JSON.parse(wasm_bindgen.phProfile(JSON.stringify({ text: d.text, column: d.column.trim() || null, weighting: d.weighting }))),
    present: (r) => ({
      verdict: r.comparison.verdict,
      fits: r.fits.map((fit) => ({ title: fit.model === r.drawn ? `${fit.model} (drawn)` : fit.model, fit })),
      comparison: comparisonTable(r.comparison),
      methods: `${r.value_name} against pH was fitted by weighted nonlinear least squares to one ionisation (rising or falling limb) and to the two-ionisation bell, y = Y/(1 + 10^(pKa1 − pH) + 10^(pH − pKa2)); models were compared by AICc and the extra-sum-of-squares F test.`,
    }),
  },
  temperature: {
    label: 'Temperature: Arrhenius and Eyring',
    hint: 'A temperature column with its unit (<code>T (°C)</code> or <code>T (K)</code>) and a rate constant (<code>k (s-1)</code>, <code>kcat (min-1)</code>, …). Arrhenius and Eyring are fitted directly to k (not to the linearised plots, which are drawn beside the direct fit), with errors of Ea, ΔH‡, ΔS‡ and ΔG‡ from the full covariance, and a test of curvature in the Arrhenius plot.',
    fields: [
      { key: 'column', label: 'Value column', type: 'text', size: 10, placeholder: 'found by name' },
      { key: 'at', label: 'ΔG‡ at', type: 'text', size: 8, placeholder: '25 °C' },
      { key: 'weighting', label: 'Weights', type: 'select', options: [['relative', '1/y² from the fitted curve (constant % error)'], ['uniform', 'equal (constant error)'], ['poisson', '1/y from the fitted curve']] },
    ],
    demo: { name: 'Est-5 kcat against temperature', text: TEMPERATURE_DEMO },
    available: () => typeof wasm_bindgen.temperatureProfile === 'function',
    run: (d) => JSON.parse(wasm_bindgen.temperatureProfile(JSON.stringify({ text: d.text, column: d.column.trim() || null, at: d.at.trim() || null, weighting: d.weighting }))),
    present: (r) => ({
      // The curvature finding is among the warnings.
      verdict: null,
      fits: [{ title: 'Arrhenius', fit: r.arrhenius }, ...(r.eyring ? [{ title: 'Eyring', fit: r.eyring }] : [])],
      comparison: null,
      methods: `Rate constants against temperature were fitted by weighted nonlinear least squares to the Arrhenius equation, k = A·exp(−Ea/RT), and the Eyring equation, k = (kB·T/h)·exp(ΔS‡/R)·exp(−ΔH‡/RT) (constants R, kB, h: CODATA 2018), with derived constants by the delta method from the full covariance; curvature of the Arrhenius plot was tested by an F test of a quadratic term in 1/T.`,
    }),
  },
};

/** A comparison of models (the core's record) as a table. */
function comparisonTable(c) {
  const tests = new Map((c.f_tests ?? []).map((f) => [f.simpler, f]));
  return {
    head: ['Model', 'RSS', 'dof', 'AICc', 'ΔAICc', 'Akaike weight', 'F test against the general model'],
    rows: c.models.map((m) => [m.model, num(m.rss), String(m.dof), num(m.aicc), num(m.delta_aicc), m.akaike_weight === null ? '—' : m.akaike_weight.toFixed(3),
      tests.has(m.model) ? `${fText(tests.get(m.model))}${tests.get(m.model).outside ? ' (the general law outside its physical range: not a rejection)' : ''}` : '—']),
  };
}

const num = (x) => (x === null || x === undefined || !Number.isFinite(x) ? '—' : page.ui.format(x));
function fText(f) {
  const p = f.p_value < 0.0001 ? 'p < 0.0001' : `p = ${f.p_value.toFixed(4)}`;
  return `F(${f.df_extra}, ${f.df_general}) = ${num(f.f)}, ${p}`;
}

let lastResult = null;
let lastError = null;
let drawnPlots = [];

/** The chooser and each question's option fields, built once. */
function build() {
  const chooser = $('further-kind');
  for (const [kind, spec] of Object.entries(KINDS)) chooser.append(new Option(spec.label, kind));
  page.bindField('further-kind', 'further.kind');
  const box = $('further-options');
  for (const [kind, spec] of Object.entries(KINDS)) {
    const group = cell('span', '', { 'data-kind': kind, class: 'further-fields' });
    for (const f of spec.fields) {
      const id = `further-${kind}-${f.key}`;
      const label = cell('label', `${f.label} `);
      let input;
      if (f.type === 'select') {
        input = document.createElement('select');
        for (const [value, text] of f.options) input.append(new Option(text, value));
      } else {
        input = document.createElement('input');
        input.type = 'text';
        input.size = f.size ?? 8;
        if (f.placeholder) input.placeholder = f.placeholder;
      }
      input.id = id;
      if (f.shownWhen) label.dataset.conditional = f.key;
      label.append(input);
      group.append(label, ' ');
    }
    box.append(group);
  }
  // Binding needs the elements in the page first.
  for (const [kind, spec] of Object.entries(KINDS)) {
    for (const f of spec.fields) page.bindField(`further-${kind}-${f.key}`, `${kind}.${f.key}`);
  }
  $('further-input').addEventListener('input', () => {
    const kind = page.doc().further.kind;
    page.typed({ type: 'set table', path: `${kind}.text`, value: $('further-input').value }, `${kind}.text`);
  });
  $('further-demo').addEventListener('click', () => page.loadDemo(`further-${page.doc().further.kind}`));
  page.view((doc) => {
    const kind = doc.further.kind;
    const text = doc[kind]?.text ?? '';
    if ($('further-input').value !== text) $('further-input').value = text;
    for (const group of box.querySelectorAll('.further-fields')) group.hidden = group.dataset.kind !== kind;
    // Options that apply to some choices only (such as [E]t for the
    // tight-binding model) are shown with those choices.
    for (const f of KINDS[kind]?.fields ?? []) {
      if (f.shownWhen) $(`further-${kind}-${f.key}`).closest('label').hidden = !f.shownWhen(doc[kind]);
    }
    $('further-hint').replaceChildren(...hintNodes(KINDS[kind]?.hint ?? ''));
    $('further-demo').hidden = !KINDS[kind]?.demo;
  });
  for (const [kind, spec] of Object.entries(KINDS)) {
    if (!spec.demo) continue;
    page.addDemo(`further-${kind}`, {
      name: spec.demo.name,
      build: (doc) => ({ ...doc, demo: [...new Set([...doc.demo, kind])], further: { kind }, [kind]: { ...doc[kind], ...spec.demo.fields, text: spec.demo.text } }),
    });
  }
}

/** A hint's text as nodes: `<code>…</code>` marks a column heading; all
 *  else is plain text (the page builds no HTML from strings). */
function hintNodes(hint) {
  return hint.split(/<code>(.*?)<\/code>/).map((part, k) => (k % 2 ? cell('code', part) : document.createTextNode(part)));
}

function clear(message, state = 'idle') {
  lastResult = null;
  const status = $('further-status');
  status.dataset.state = state;
  status.textContent = message;
  for (const id of ['further-verdict', 'further-fits', 'further-comparison', 'further-warnings', 'further-plots', 'further-methods', 'further-caution']) $(id).replaceChildren();
  $('further-output').hidden = true;
  drawnPlots = [];
}

function analyse(doc) {
  const kind = doc.further.kind;
  const spec = KINDS[kind];
  const d = doc[kind];
  lastError = null;
  if (!spec || !d) return clear(`Turnover does not know the question “${kind}”.`, 'error');
  if (!spec.available()) return clear('This copy of Turnover’s core cannot answer this question yet.', 'error');
  if (!d.text.trim()) return clear('No table yet: paste one above, open a file, or load the demo.');
  let result;
  try {
    result = spec.run(d);
  } catch (error) {
    if (page.coreFailed(error)) return;
    lastError = error?.message ?? String(error);
    return clear(`No result: ${lastError}`, 'error');
  }
  lastResult = { kind, result, shown: spec.present(result) };
  show(lastResult);
}

function show({ kind, result, shown }) {
  $('further-output').hidden = false;
  const problems = (result.problems ?? []).map((p) => `${p.column ? `line ${p.line}, column ${p.column}` : `line ${p.line}`}: ${p.message} (not used)`);
  const warnings = [...(result.warnings ?? []), ...problems, ...(result.notes ?? [])];
  const status = $('further-status');
  const failed = shown.fits.some((f) => !f.fit.converged);
  status.dataset.state = failed ? 'error' : warnings.length ? 'warn' : 'ok';
  status.textContent = failed
    ? 'At least one fit did not converge: its numbers are not a least-squares solution (see its table).'
    : `Fitted${warnings.length ? ': read the warnings below' : ''}.`;
  // The verdict, or its findings one to a line when it has several.
  const findings = shown.findings?.length ? shown.findings : shown.verdict ? [shown.verdict] : [];
  $('further-verdict').replaceChildren(...findings.map((t) => cell('p', t, { class: 'verdict' })));
  const fits = $('further-fits');
  fits.replaceChildren();
  for (const { title, fit } of shown.fits) {
    const table = cell('table', '', { class: 'small-table' });
    const head = table.createTHead().insertRow();
    for (const h of ['Constant', 'Estimate', 'Std. error', `${Math.round(fit.confidence_level * 100)}% interval`, 'Unit']) head.append(cell('th', h));
    const body = table.createTBody();
    for (const p of fit.parameters) body.append(page.ui.parameterRow(p));
    const block = cell('div', '', { class: 'further-fit', 'data-fit': title });
    block.append(cell('h3', title), cell('p', fit.equation, { class: 'equation' }), table);
    if (!fit.converged) block.append(cell('p', `The fit ${fit.termination_text}.`, { class: 'warn' }));
    fits.append(block);
  }
  const comparison = $('further-comparison');
  comparison.replaceChildren();
  if (shown.comparison) {
    const table = cell('table', '', { class: 'small-table' });
    const head = table.createTHead().insertRow();
    for (const h of shown.comparison.head) head.append(cell('th', h));
    const body = table.createTBody();
    for (const row of shown.comparison.rows) {
      const tr = body.insertRow();
      for (const x of row) tr.append(cell('td', x));
    }
    comparison.append(cell('h3', 'Models compared'), table);
  }
  $('further-warnings').replaceChildren(...warnings.map((w) => cell('li', w)));
  drawPlots(result.plots ?? []);
  $('further-methods').textContent = `${shown.methods} ${page.ui.versionText()}`;
  $('further-caution').textContent = result.caution ?? '';
  $('further-panel').dataset.kind = kind;
}

function drawPlots(plots) {
  drawnPlots = plots;
  // The figure is of the plot shown once the result is brought up to date.
  page.ui.drawPlotList($('further-plots'), plots, { height: 340, current: (index) => (section.flush(), drawnPlots[index]) });
}

function constantsRows() {
  const rows = [['fit', ...page.ui.constantsRows([])[0]]];
  for (const { title, fit } of lastResult.shown.fits) {
    for (const row of page.ui.constantsRows([fit]).slice(1)) rows.push([title, ...row]);
  }
  return rows;
}

const section = page.derived({
  key: (doc) => JSON.stringify([doc.further.kind, doc[doc.further.kind]]),
  compute: (doc) => {
    analyse(doc);
    $('further-panel').classList.toggle('no-data', !(doc[doc.further.kind]?.text ?? '').trim());
  },
  stale: (on) => $('further-panel').classList.toggle('stale', on),
});

page.addText('Further question', () => {
  if (!lastResult || !section.fresh()) return [];
  const { kind, shown, result } = lastResult;
  const lines = [`# Question: ${KINDS[kind].label}`];
  if (shown.verdict) lines.push(`# verdict: ${shown.verdict}`);
  for (const { title, fit } of shown.fits) lines.push(...page.ui.fitAsText(title, fit));
  for (const w of result.warnings ?? []) lines.push(`# warning: ${w}`);
  lines.push(`# methods: ${$('further-methods').textContent}`);
  return lines;
});

$('further-csv').addEventListener('click', () => {
  section.flush();
  if (lastResult) page.ui.downloadCsv(`${lastResult.kind}-constants`, constantsRows());
});
$('further-file').addEventListener('change', async (event) => {
  const file = event.target.files[0];
  event.target.value = '';
  if (!file) return;
  const note = $('further-file-note');
  const read = await page.ui.tableFromFile(file);
  const apply = (sheet) => {
    note.hidden = !(sheet.error || sheet.note);
    note.textContent = sheet.error ?? sheet.note ?? '';
    if (sheet.error !== undefined) return;
    const kind = page.doc().further.kind;
    page.dispatch({ type: 'set table', path: `${kind}.text`, value: sheet.text });
  };
  if (read.error === undefined) page.ui.showSheetChoice('further-sheet-choice', read, apply);
  apply(read);
});

page.onCoreRestart(() => { drawnPlots = []; });
build();

window.turnover.further = {
  kinds: () => Object.keys(KINDS),
  lastResult: () => (section.fresh() ? lastResult?.result ?? null : (section.flush(), lastResult?.result ?? null)),
  lastError: () => lastError,
};
