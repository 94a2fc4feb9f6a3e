// Turnover page, two questions asked of the time courses: is the enzyme
// stable during the assay (the check that traces at several [E] superimpose
// against [E]·t, run by the core with every time-course analysis), and
// time-dependent inhibition (each trace with an inhibitor fitted to the
// approach to a steady-state rate, then kobs against [I] for kinact and
// KI). Both read the time-course section's document and results; every
// number comes from the core.

/* global wasm_bindgen */

const $ = (id) => document.getElementById(id);
const page = window.turnover;
const { cell } = page.ui;

// Invented demo scenario (not measured data): the fictional protease Pro-2
// with an imaginary covalent inhibitor "compound 7". Progress curves made
// from P(t) = offset + v0(1 − e^(−kobs·t))/kobs with kobs =
// kinact·[I]/(KI + [I]), kinact = 0.25 min⁻¹, KI = 3 µM, v0 = 0.02 per min,
// readings every 0.5 min for 30 min, plus seeded Gaussian noise (SD 0.0008,
// the generator below, seed 2026).
function inactivationDemo() {
  const { normal } = page.ui.seededNoise(2026);
  const doses = [0, 0.5, 1, 2, 4, 8, 16, 32];
  const names = doses.map((_, k) => `A${k + 1}`);
  const lines = ['Demo plate (simulated): protease Pro-2 with compound 7', 'Read: absorbance 405 nm', ''];
  lines.push(['time (min)', ...names].join('\t'));
  for (let j = 0; j <= 60; j++) {
    const t = j * 0.5;
    const cells = [t.toFixed(1)];
    for (const i of doses) {
      const k = (0.25 * i) / (3 + i);
      const p = 0.05 + (k === 0 ? 0.02 * t : (0.02 * (1 - Math.exp(-k * t))) / k);
      cells.push((p + 0.0008 * normal()).toFixed(4));
    }
    lines.push(cells.join('\t'));
  }
  const layout = ['trace\tS (µM)\tI (µM)\tE (nM)\trole', ...names.map((n, k) => `${n}\t50\t${doses[k]}\t5\tsample`)];
  return { traces: `${lines.join('\n')}\n`, layout: `${layout.join('\n')}\n` };
}

let lastResult = null;
let lastError = null;

/** The request of the inactivation analysis, or a sentence saying which
 *  field cannot be read. */
function request(doc) {
  const t = doc.traces;
  const read = (text, label) => {
    const { value, problem } = page.ui.readTyped(text);
    return problem ? { problem: `${label}: ${problem}.` } : { value };
  };
  const s = read(t.inact_substrate, '[S] for the substrate correction');
  const km = read(t.inact_km, 'Km for the substrate correction');
  if (s.problem || km.problem) return { problem: s.problem ?? km.problem };
  if ((s.value === null) !== (km.value === null)) return { problem: 'Give both [S] and Km (in one unit) for the substrate correction, or neither.' };
  const traces = window.turnoverTraces.request(doc);
  if (traces.problem) return { problem: traces.problem };
  return { request: { traces: traces.request, substrate: s.value, km: km.value } };
}

function clear(message, state = 'idle') {
  lastResult = null;
  $('inactivation-status').dataset.state = state;
  $('inactivation-status').textContent = message;
  $('inactivation-output').hidden = true;
}

/** The F test of saturation ([F, df1, df2, p]) as a sentence, or ''. */
function saturationText(test) {
  if (!test) return '';
  return ` Saturation: F(${test[1]}, ${test[2]}) = ${page.ui.format(test[0])}, ${test[3] < 0.0001 ? 'p < 0.0001' : `p = ${test[3].toFixed(4)}`}.`;
}

function analyse(doc) {
  lastError = null;
  $('inactivation-options').hidden = !doc.traces.inactivation;
  if (!doc.traces.inactivation) return clear('');
  if (!doc.traces.text.trim()) return clear('Paste progress curves above, with [I] in the layout (an I column).');
  const asked = request(doc);
  if (asked.problem) return clear(asked.problem, 'error');
  let result;
  try {
    result = JSON.parse(wasm_bindgen.inactivation(JSON.stringify(asked.request)));
  } catch (error) {
    if (page.coreFailed(error)) return;
    lastError = error?.message ?? String(error);
    return clear(`No inactivation fit: ${lastError}`, 'error');
  }
  lastResult = result;
  $('inactivation-output').hidden = false;
  const warned = result.warnings.length > 0;
  $('inactivation-status').dataset.state = warned ? 'warn' : 'ok';
  const sat = saturationText(result.saturation_test);
  $('inactivation-status').textContent = `${result.traces.length} traces with inhibitor fitted; ${result.saturation ? 'kobs saturates with [I]: kinact and KI reported' : 'no saturation seen: only kinact/KI is reported'}.${sat}`;
  const body = $('inactivation-parameters').tBodies[0];
  body.replaceChildren(...result.parameters.map((p) => page.ui.parameterRow(p)));
  const rows = $('inactivation-traces').tBodies[0];
  rows.replaceChildren();
  for (const t of result.traces) {
    const tr = rows.insertRow();
    tr.dataset.trace = t.trace;
    tr.dataset.kobs = String(t.kobs);
    for (const x of [t.trace, page.ui.format(t.i), page.ui.estimateText(t.kobs, t.kobs_se), page.ui.format(t.v0), page.ui.format(t.vs), String(t.n), t.converged ? (t.used ? 'yes' : 'left out') : 'did not converge']) tr.append(cell('td', x));
  }
  $('inactivation-unit').textContent = `kobs in ${result.time_unit}⁻¹; [I] in ${result.inhibitor_unit ?? '(no unit read)'}.`;
  $('inactivation-warnings').replaceChildren(...[...result.warnings, ...result.notes].map((w) => cell('li', w)));
  page.ui.drawPlotList($('inactivation-plots'), result.plots);
  showGlobal(result.global);
  $('inactivation-caution').textContent = result.caution;
}

/** The fit of every trace at once with kinact and KI shared, beside the
 *  two-step route's constants. */
function showGlobal(global) {
  $('inactivation-global').hidden = !global;
  if (!global) return;
  const f = page.ui.format;
  const sat = saturationText(global.saturation_test);
  const status = $('inactivation-global-status');
  status.dataset.state = !global.converged ? 'error' : global.warnings.length ? 'warn' : 'ok';
  status.textContent = `${global.converged ? 'Converged' : 'Did not converge'} on ${global.n} readings of ${global.traces.length} traces (${global.fitted} constants fitted, residual SD ${f(global.sigma, 3)}, AICc ${f(global.aicc)}); ${global.saturation ? 'kinact and KI reported' : 'no saturation seen: only kinact/KI'}.${sat}`;
  $('inactivation-global-parameters').tBodies[0].replaceChildren(...global.parameters.map((p) => page.ui.parameterRow(p)));
  const rows = $('inactivation-global-comparison').tBodies[0];
  rows.replaceChildren();
  for (const c of global.comparison) {
    const tr = rows.insertRow();
    tr.dataset.param = c.name;
    tr.dataset.ratio = String(c.ratio);
    for (const x of [c.name, page.ui.estimateText(c.global, c.global_se), page.ui.estimateText(c.two_step, c.two_step_se), f(c.ratio, 3), c.se_ratio === null ? '—' : f(c.se_ratio, 3)]) tr.append(cell('td', x));
  }
  $('inactivation-global-warnings').replaceChildren(...global.warnings.map((w) => cell('li', w)));
  page.ui.drawPlotList($('inactivation-global-plots'), [global.plot]);
}

/** The stability check: one finding per group of traces at one [S] and
 *  [I] with several [E], from the shown time-course analysis. */
function showStability(result) {
  const checks = result?.selwyn ?? [];
  $('stability-panel').hidden = checks.length === 0;
  $('stability-findings').replaceChildren(...checks.map((c) => cell('li', c.message, { 'data-flagged': String(c.flagged) })));
  page.ui.drawPlotList($('stability-plots'), checks.map((c) => c.plot));
}

const section = page.derived({
  key: (doc) => (doc.traces.inactivation
    ? JSON.stringify([window.turnoverTraces.requestKey(doc), doc.traces.inact_substrate, doc.traces.inact_km])
    : 'off'),
  compute: analyse,
  stale: (on) => $('inactivation-block').classList.toggle('stale', on),
});

page.addText('Time-dependent inhibition', () => {
  if (!lastResult || !section.fresh()) return [];
  const lines = ['# Time-dependent inhibition: kobs per trace, then kobs against [I]', ['constant', 'estimate', 'std_error', 'ci_low', 'ci_high', 'ci_method', 'unit'].join('\t')];
  for (const p of lastResult.parameters) lines.push([p.name, p.value, p.std_error ?? '', p.ci_low ?? '', p.ci_high ?? '', p.ci_method, p.unit ?? ''].join('\t'));
  lines.push(['trace', 'i', 'kobs', 'kobs_se', 'v0', 'vs', 'n', 'converged', 'used'].join('\t'));
  for (const t of lastResult.traces) lines.push([t.trace, t.i, t.kobs, t.kobs_se ?? '', t.v0, t.vs, t.n, t.converged, t.used].join('\t'));
  for (const w of lastResult.warnings) lines.push(`# warning: ${w}`);
  const global = lastResult.global;
  if (global) {
    lines.push('# Time-dependent inhibition: every trace at once, kinact and KI shared', ['constant', 'estimate', 'std_error', 'ci_low', 'ci_high', 'ci_method', 'unit'].join('\t'));
    for (const p of global.parameters) lines.push([p.name, p.value, p.std_error ?? '', p.ci_low ?? '', p.ci_high ?? '', p.ci_method, p.unit ?? ''].join('\t'));
    for (const w of global.warnings) lines.push(`# warning: ${w}`);
  }
  return lines;
});

page.bindField('tr-inactivation', 'traces.inactivation');
page.bindField('tr-inact-substrate', 'traces.inact_substrate');
page.bindField('tr-inact-km', 'traces.inact_km');
window.turnoverTraces.onResult(showStability);
page.addDemo('inactivation', {
  name: 'Pro-2 with compound 7 (time-dependent inhibition)',
  build: (doc) => {
    const demo = inactivationDemo();
    return {
      ...doc,
      demo: [...new Set([...doc.demo, 'traces'])],
      traces: { ...doc.traces, text: demo.traces, layout: demo.layout, conversion: 'none', inactivation: true },
    };
  },
});
$('load-inactivation-demo').addEventListener('click', () => page.loadDemo('inactivation'));

window.turnover.inactivation = {
  lastResult: () => (section.fresh() ? lastResult : (section.flush(), lastResult)),
  lastError: () => lastError,
};
