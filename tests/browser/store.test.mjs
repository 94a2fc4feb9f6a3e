// The page's document (www/store.js) tested on its own in Node: the named
// edits, demo documents giving way to a person's table, validation of
// stored, imported and linked documents, migration of pages saved by
// Turnover 0.1, and undo/redo with autosave through a stand-in shelf.
// No browser is needed: store.js touches the DOM only when the page runs.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';

import {
  applyEdit, blankDocument, validateDocument, readDocumentText, Workspace, SCHEMA, FORMAT,
} from '../../www/store.js';

const here = dirname(fileURLToPath(import.meta.url));

/** A shelf that keeps documents in a Map, as localStorage would. */
class MemoryShelf {
  constructor() {
    this.docs = new Map();
  }

  put(doc) {
    this.docs.set(doc.id, JSON.parse(JSON.stringify(doc)));
  }

  remove(id) {
    this.docs.delete(id);
  }

  index() {
    return [...this.docs.values()].map((d) => ({ id: d.id, name: d.name }));
  }
}

function demoDoc() {
  const doc = blankDocument('Demo: rates (invented data)');
  return {
    ...doc,
    demo: ['rates', 'traces'],
    rates: { ...doc.rates, text: '# Demo\nS\tv\n1\t2\n', enzyme: '25', enzyme_unit: 'nM', excluded_lines: [3] },
    traces: { ...doc.traces, text: 'Demo plate (simulated)\n', layout: 'trace\tS\n', epsilon: '6220', path: '0.6' },
  };
}

test('each named edit changes exactly its part of the document', () => {
  const doc = blankDocument();
  const cases = [
    [{ type: 'set field', path: 'rates.weighting', value: 'relative' }, (d) => d.rates.weighting === 'relative'],
    [{ type: 'set field', path: 'rates.enzyme', value: 'abc' }, (d) => d.rates.enzyme === 'abc'],
    [{ type: 'toggle point', section: 'rates', line: 4 }, (d) => d.rates.excluded_lines.join() === '4'],
    [{ type: 'toggle cell', cell: '5:3' }, (d) => d.inhibition.excluded_cells.join() === '5:3'],
    [{ type: 'set window', trace: 'A1', start: 6, end: 2 }, (d) => d.traces.windows.A1.join() === '2,6'],
    [{ type: 'window for all', start: 1, end: 3 }, (d) => d.traces.windows['*'].join() === '1,3'],
    [{ type: 'toggle trace', trace: 'B2' }, (d) => d.traces.excluded.join() === 'B2'],
    [{ type: 'choose preset', preset: 'nadh', epsilon: '6220' }, (d) => d.traces.preset === 'nadh' && d.traces.epsilon === '6220'],
    [{ type: 'fit whole curves', on: true }, (d) => d.traces.whole_curve === true],
    [{ type: 'rename', name: 'Mutant K41A' }, (d) => d.name === 'Mutant K41A'],
    [{ type: 'report time', value: 's', factor: 60 }, (d) => d.traces.report_time === 's'],
  ];
  for (const [edit, holds] of cases) {
    const after = applyEdit(doc, edit);
    assert.ok(holds(after), `${edit.type}: ${JSON.stringify(after)}`);
    assert.equal(doc.rates.weighting, 'uniform', `${edit.type} must not change the document it was given`);
  }
  // A second toggle brings the point back.
  const twice = applyEdit(applyEdit(doc, { type: 'toggle point', section: 'dose', line: 7 }), { type: 'toggle point', section: 'dose', line: 7 });
  assert.deepEqual(twice.dose.excluded_lines, []);
  // The time unit rescales the windows set by hand in the same step (from
  // minutes to seconds: × 60), and undoing is the document before.
  const windowed = applyEdit(applyEdit(doc, { type: 'set window', trace: 'A3', start: 2, end: 6 }), { type: 'window for all', start: 1, end: 3 });
  const inSeconds = applyEdit(applyEdit(doc, { type: 'set window', trace: 'A3', start: 2, end: 6 }), { type: 'report time', value: 's', factor: 60 });
  assert.deepEqual(inSeconds.traces.windows, { A3: [120, 360] });
  assert.deepEqual(applyEdit(windowed, { type: 'report time', value: 'min', factor: 1 }).traces.windows, windowed.traces.windows);
  // Setting a field to the value it has is no edit at all.
  assert.equal(applyEdit(doc, { type: 'set field', path: 'rates.weighting', value: 'uniform' }), doc);
  assert.throws(() => applyEdit(doc, { type: 'no such edit' }), /unknown edit/);
});

test('a new rate table clears the exclusions that named lines of the old one', () => {
  let doc = blankDocument();
  doc = applyEdit(doc, { type: 'set table', path: 'rates.text', value: 'S\tv\n1\t2\n2\t3\n' });
  doc = applyEdit(doc, { type: 'toggle point', section: 'rates', line: 2 });
  doc = applyEdit(doc, { type: 'toggle point', section: 'dose', line: 3 });
  doc = applyEdit(doc, { type: 'set table', path: 'rates.text', value: 'S\tv\n1\t2\n' });
  assert.deepEqual(doc.rates.excluded_lines, []);
  assert.deepEqual(doc.dose.excluded_lines, [3], 'the dose table has its own input and its own exclusions');
  doc = applyEdit(doc, { type: 'move table', to: 'dose', value: '[I]\tresponse\n0\t100\n' });
  assert.equal(doc.dose.text, '[I]\tresponse\n0\t100\n');
  assert.equal(doc.rates.text, 'S\tv\n1\t2\n', 'a moved table leaves the input it was pasted into as it was');
  assert.deepEqual(doc.dose.excluded_lines, []);
});

test('a person’s own table replaces the demo and the demo’s values leave with it', () => {
  const demo = demoDoc();
  const own = applyEdit(demo, { type: 'set table', path: 'rates.text', value: 'S\tv\n0.1\t1\n' });
  assert.equal(own.rates.text, 'S\tv\n0.1\t1\n');
  assert.equal(own.rates.enzyme, '', 'the demo [E]t leaves');
  assert.deepEqual(own.rates.excluded_lines, []);
  assert.equal(own.traces.text, '', 'the demo plate leaves');
  assert.equal(own.traces.epsilon, '', 'the demo conversion leaves');
  assert.deepEqual(own.demo, []);
  assert.equal(own.name, 'Untitled analysis');
  // The same when the person's table is a plate.
  const plate = applyEdit(demo, { type: 'set table', path: 'traces.text', value: 'time (min)\tA1\n0\t0.1\n' });
  assert.equal(plate.rates.text, '');
  assert.equal(plate.rates.enzyme, '');
  assert.equal(plate.traces.layout, '');
  // The demo plate's layout or standard curve edited: the readings are
  // still the demo's, so the document stays a demo with every section.
  for (const path of ['traces.layout', 'traces.standard']) {
    const described = applyEdit(demo, { type: 'set table', path, value: 'A1\tsample\t10 µM\n' });
    assert.deepEqual(described.demo, ['rates', 'traces'], path);
    assert.equal(described.traces.text, demo.traces.text, `${path}: the demo readings stay`);
    assert.equal(described.rates.enzyme, demo.rates.enzyme, `${path}: the rate demo stays`);
    assert.equal(described.name, demo.name);
  }
  // A person's layout on a document whose plate is not the demo's is theirs.
  const ownPlate = applyEdit(demoDoc(), { type: 'set table', path: 'traces.text', value: 'time (min)\tA1\n0\t0.1\n' });
  assert.deepEqual(applyEdit(ownPlate, { type: 'set table', path: 'traces.layout', value: 'A1\tsample\n' }).demo, []);
  // A setting changed while exploring the demo keeps it a demo.
  const explored = applyEdit(demo, { type: 'set field', path: 'rates.weighting', value: 'relative' });
  assert.deepEqual(explored.demo, ['rates', 'traces']);
  // Rates sent from a plate into a demo's rate section do not inherit its [E]t.
  const sent = applyEdit(demo, { type: 'send rates', table: 'S (µM)\tv (µM/min)\n10\t1\n' });
  assert.equal(sent.rates.enzyme, '');
  assert.equal(sent.rates.text, 'S (µM)\tv (µM/min)\n10\t1\n');
  assert.ok(!sent.demo.includes('rates'));
});

test('validation accepts every document the edits make and refuses bad ones with a reason', () => {
  const good = applyEdit(demoDoc(), { type: 'set window', trace: 'A1', start: 1, end: 2 });
  const checked = validateDocument(JSON.parse(JSON.stringify(good)));
  assert.equal(checked.error, undefined);
  assert.deepEqual(checked.document, good);
  const bad = [
    [null, /not a JSON object/],
    [[], /not a JSON object/],
    [{ ...good, format: 'something-else' }, /"format"/],
    [{ ...good, schema: SCHEMA + 1 }, /newer Turnover/],
    [{ ...good, surprise: 1 }, /unknown field "surprise"/],
    [{ ...good, name: 7 }, /"name" must be a text/],
    [{ ...good, id: 'not hex!' }, /"id"/],
    [{ ...good, rates: { ...good.rates, text: 12 } }, /"rates.text" must be text/],
    [{ ...good, rates: { ...good.rates, excluded_lines: [0] } }, /line numbers/],
    [{ ...good, rates: { ...good.rates, typo: '' } }, /"rates" has an unknown field "typo"/],
    [{ ...good, traces: { ...good.traces, windows: { A1: [3, 1] } } }, /bad window for trace "A1"/],
    [{ ...good, inhibition: { ...good.inhibition, excluded_cells: ['x'] } }, /line:column/],
  ];
  for (const [value, message] of bad) {
    const result = validateDocument(value);
    assert.ok(result.error, `should refuse ${JSON.stringify(value)?.slice(0, 80)}`);
    assert.match(result.error, message);
  }
  assert.match(readDocumentText('{"format": ').error, /not valid JSON/);
});

// A page saved by Turnover 0.1 (main before the document existed), kept as
// a fixture: tests/browser/fixtures/saved-page-v1.html (made by
// make-saved-page-v1.mjs beside it). It holds a typed rate table with one
// point left out, [E]t 12.5 nM, relative weights, profile intervals, a
// dose-response option and a time-course plate with a window set by hand
// and a trace left out.
test('a page saved by Turnover 0.1 migrates to the current document', () => {
  const page = readFileSync(join(here, 'fixtures', 'saved-page-v1.html'), 'utf8');
  const checked = readDocumentText(page);
  assert.equal(checked.error, undefined, checked.error);
  assert.equal(checked.migrated, true);
  const doc = checked.document;
  assert.equal(doc.format, FORMAT);
  assert.equal(doc.schema, SCHEMA);
  const saved = JSON.parse(/<script type="application\/json" id="turnover-saved-state">([\s\S]*?)<\/script>/.exec(page)[1]);
  assert.equal(doc.rates.text, saved.request.text);
  assert.deepEqual(doc.rates.excluded_lines, saved.request.excluded_lines);
  assert.equal(doc.rates.weighting, `${saved.request.weighting}_measured`, 'the saved weighting, on the measured rates as 0.1 computed it');
  assert.match(doc.notes, /weighted by the measured rates/);
  assert.equal(doc.rates.interval_method, saved.request.interval_method);
  assert.equal(doc.rates.enzyme, '12.5');
  assert.equal(doc.rates.enzyme_unit, 'nM');
  assert.equal(doc.traces.text, saved.fields['traces-input'].value);
  assert.equal(doc.traces.epsilon, saved.fields['tr-epsilon'].value);
  assert.deepEqual(doc.traces.excluded, saved.sections.traces.excluded);
  for (const [name, w] of saved.sections.traces.windows) assert.deepEqual(doc.traces.windows[name], [w.start, w.end]);
  assert.equal(doc.dose.model, saved.fields['dose-model'].value);
  assert.deepEqual(doc.demo, ['traces'], 'the demo plate that travelled along is marked as demo content');
  // That version saved an [E]t it could not read (typed "abc") as -1: it
  // is not brought back as a number, and the document says so.
  const unreadable = validateDocument({ ...saved, request: { ...saved.request, enzyme: -1 } });
  assert.equal(unreadable.document.rates.enzyme, '');
  assert.match(unreadable.document.notes, /\[E\]t could not be read/);
  // A saved page of an unknown version is refused with a reason.
  assert.match(validateDocument({ ...saved, version: 9 }).error, /unknown version/);
});

test('undo and redo walk back and forth through 150 edits; typing bursts are one step', () => {
  const shelf = new MemoryShelf();
  const seen = [];
  const workspace = new Workspace({ shelf, onChange: () => {} });
  workspace.view((doc) => seen.push(doc));
  const first = blankDocument();
  workspace.start(first);
  const docs = [first];
  for (let k = 1; k <= 150; k++) {
    workspace.dispatch({ type: 'set field', path: 'rates.seed', value: String(k + 1) });
    docs.push(workspace.doc);
  }
  assert.equal(workspace.doc.rates.seed, '151');
  for (let k = 149; k >= 0; k--) {
    assert.ok(workspace.undo());
    assert.deepEqual(workspace.doc, docs[k]);
    assert.deepEqual(shelf.docs.get(first.id), docs[k], 'autosave keeps the shown document');
  }
  assert.equal(workspace.undo(), false, 'nothing left to undo');
  for (let k = 1; k <= 150; k++) {
    assert.ok(workspace.redo());
    assert.deepEqual(workspace.doc, docs[k]);
  }
  // Typing: one step per burst.
  for (const value of ['S', 'S\t', 'S\tv']) workspace.dispatch({ type: 'set table', path: 'rates.text', value }, { coalesce: 'rates.text' });
  workspace.undo();
  assert.equal(workspace.doc.rates.text, '');
  assert.ok(seen.length > 300, 'views were told of every change');
});

test('whole-document edits: a demo, a duplicate and a deletion are each undone', () => {
  const shelf = new MemoryShelf();
  const workspace = new Workspace({ shelf, onChange: () => {} });
  const mine = applyEdit(blankDocument('Mine'), { type: 'set table', path: 'rates.text', value: 'S\tv\n1\t2\n' });
  workspace.start(mine);
  const demo = demoDoc();
  workspace.dispatch({ type: 'load demo', document: demo });
  assert.equal(workspace.doc.id, demo.id);
  assert.ok(shelf.docs.has(mine.id), 'my analysis stays kept');
  workspace.undo();
  assert.deepEqual(workspace.doc, mine);
  assert.ok(!shelf.docs.has(demo.id), 'undoing the demo removes it again');
  workspace.redo();
  assert.equal(workspace.doc.id, demo.id);
  workspace.undo();
  // Delete, then undo the deletion.
  const other = blankDocument('Other');
  workspace.dispatch({ type: 'delete analysis', document: other });
  assert.ok(!shelf.docs.has(mine.id), 'deleted');
  workspace.undo();
  assert.deepEqual(shelf.docs.get(mine.id), mine, 'the deletion is undone');
  assert.deepEqual(workspace.doc, mine);
  workspace.redo();
  assert.ok(!shelf.docs.has(mine.id), 'and done again');
});

// A document of schema 2 (before the further questions and the
// time-dependent inhibition fields), kept as a fixture made by the schema 2
// document module itself: fixtures/document-schema2.json, by
// make-document-schema2.mjs beside it. It opens unchanged, with the new
// sections at their defaults, and can be edited at once.
test('a schema 2 document opens as schema 3 with everything it held', () => {
  const text = readFileSync(join(here, 'fixtures', 'document-schema2.json'), 'utf8');
  const old = JSON.parse(text);
  const checked = readDocumentText(text);
  assert.equal(checked.error, undefined, checked.error);
  const doc = checked.document;
  assert.equal(doc.schema, SCHEMA);
  for (const section of ['figure', 'assay']) assert.deepEqual(doc[section], old[section], section);
  // Sections that gained fields keep every field they had.
  for (const section of ['rates', 'traces', 'inhibition', 'dose']) {
    for (const [key, value] of Object.entries(old[section])) assert.deepEqual(doc[section][key], value, `${section}.${key}`);
  }
  assert.equal(doc.rates.protein, '');
  assert.equal(doc.inhibition.rate_time, '');
  assert.equal(doc.dose.rate_time, '');
  assert.equal(doc.traces.report_time, '');
  assert.equal(doc.traces.inactivation, false);
  assert.equal(doc.further.kind, 'sets');
  assert.equal(doc.sets.text, '');
  assert.deepEqual(doc.rates.excluded_lines, [4]);
  const edited = applyEdit(doc, { type: 'set table', path: 'sets.text', value: 'set\t[S]\tv\n' });
  assert.equal(edited.sets.text, 'set\t[S]\tv\n');
  // A further question this page does not know is refused, not shown wrong.
  assert.match(validateDocument({ ...doc, further: { kind: 'guess' } }).error, /further\.kind/);
});
