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
  // every 4 bytes (big-endian), padded with zeros to data-bytes.
  function decode85(element) {
    var alphabet = element.dataset.text;
    var text = element.textContent.trim();
    var length = Number(element.dataset.bytes);
    if (alphabet.length !== 85 || text.length % 5 !== 0 || !(length <= (text.length / 5) * 4)) {
      throw new Error('the page\'s copy of its computing core is damaged (its text has the wrong length); download the page again');
    }
    var value = new Uint8Array(128).fill(255);
    for (var k = 0; k < 85; k++) value[alphabet.charCodeAt(k)] = k;
    var bytes = new Uint8Array((text.length / 5) * 4);
    for (var i = 0, o = 0; i < text.length; i += 5, o += 4) {
      var n = 0;
      for (var d = 0; d < 5; d++) {
        var c = text.charCodeAt(i + d);
        var v = c < 128 ? value[c] : 255;
        if (v === 255) throw new Error('the page\'s copy of its computing core is damaged (a character that is not its own); download the page again');
        n = n * 85 + v;
      }
      bytes[o] = n >>> 24;
      bytes[o + 1] = (n >>> 16) & 255;
      bytes[o + 2] = (n >>> 8) & 255;
      bytes[o + 3] = n & 255;
    }
    return bytes.subarray(0, length);
  }
})();
