// Runs as soon as the parser has read the WebAssembly holder above it, so
// that the core is unpacked and compiled (WebAssembly.compile works off the
// main thread) while the browser reads the rest of the page and its
// modules. A classic script, not a module: modules wait for the whole
// document. www/app.js awaits window.turnoverUnpacked, a promise of
// { binary, module }; a failure is reported there, where the page says
// that the core could not start.
(function () {
  'use strict';
  var holder = document.getElementById('turnover-wasm');
  if (!holder) return;
  window.turnoverUnpacked = new Promise(function (resolve) {
    var bytes = decode85(holder);
    if (typeof DecompressionStream === 'undefined') {
      throw new Error('this browser is too old to unpack the page (it lacks DecompressionStream); use a current Chrome, Edge, Firefox or Safari');
    }
    var stream = new Blob([bytes]).stream().pipeThrough(new DecompressionStream('gzip'));
    resolve(new Response(stream).arrayBuffer().then(function (buffer) { return new Uint8Array(buffer); }));
  }).then(function (binary) {
    return WebAssembly.compile(binary).then(function (module) { return { binary: binary, module: module }; });
  });
  // Handled by www/app.js; this keeps the console free of a second report.
  window.turnoverUnpacked.catch(function () {});

  // The assembler's text: 5 characters of the alphabet in data-text for
  // every 4 bytes (big-endian), padded with zeros to data-bytes. The text
  // is turned into its character codes by the browser's own encoder (it is
  // plain ASCII, one byte a character) and read from a byte array; each
  // group's value is formed from two parts below 85³ so that it stays a
  // small integer until the last step, and a character outside the
  // alphabet is caught once for the whole text (its code maps to 255, and
  // no code of the alphabet has the top bit). This runs once, cold, on
  // about 700,000 characters: in Node it took 4.8 ms against 10.5 ms for
  // the plain loop over charCodeAt it replaces, in Chromium's profile of
  // the page's start about 13 ms against 16.5 ms (three loads each).
  function decode85(element) {
    var damaged = function (why) {
      return new Error('the page\'s copy of its computing core is damaged (' + why + '); download the page again');
    };
    var alphabet = element.dataset.text;
    var text = element.textContent.trim();
    var length = Number(element.dataset.bytes);
    if (alphabet.length !== 85 || text.length % 5 !== 0 || !(length <= (text.length / 5) * 4)) {
      throw damaged('its text has the wrong length');
    }
    var codes = new TextEncoder().encode(text);
    if (codes.length !== text.length) throw damaged('a character that is not its own');
    var value = new Uint8Array(256).fill(255);
    for (var k = 0; k < 85; k++) value[alphabet.charCodeAt(k)] = k;
    var groups = codes.length / 5;
    var bytes = new Uint8Array(groups * 4);
    var view = new DataView(bytes.buffer);
    var seen = 0;
    for (var g = 0, i = 0; g < groups; g++, i += 5) {
      var a = value[codes[i]], b = value[codes[i + 1]], c = value[codes[i + 2]], d = value[codes[i + 3]], e = value[codes[i + 4]];
      seen |= a | b | c | d | e;
      view.setUint32(g * 4, ((a * 7225 + b * 85 + c) * 7225 + (d * 85 + e)) >>> 0);
    }
    if (seen & 128) throw damaged('a character that is not its own');
    return bytes.subarray(0, length);
  }
})();
