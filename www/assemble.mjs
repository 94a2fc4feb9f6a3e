// Builds the single self-contained page: www/index.html with the style
// sheet, the wasm-bindgen glue, the WebAssembly binary (base64) and app.js
// written into it, so that it works from file:// with no server and no
// network. Uses Node's standard library only.
//
//   node www/assemble.mjs PKG_DIR OUT_FILE

import { readFileSync, writeFileSync, mkdirSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { gzipSync, constants } from 'node:zlib';
import { fileURLToPath } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const [pkgDir, outFile] = process.argv.slice(2);
if (!pkgDir || !outFile) {
  console.error('usage: node www/assemble.mjs PKG_DIR OUT_FILE');
  process.exit(2);
}

const read = (path) => readFileSync(path, 'utf8');
// Text placed inside a <script> element must not close it early.
const scriptSafe = (text) => text.replace(/<\/script/gi, '<\\/script').replace(/<!--/g, '<\\!--');

let page = read(join(here, 'index.html'));
const blocks = {
  style: `<style>\n${read(join(here, 'style.css'))}</style>`,
  // The binary is gzip-compressed before base64 (about a third of the
  // size); the page inflates it with the browser's DecompressionStream.
  wasm: `<script type="application/octet-stream" id="turnover-wasm" data-encoding="gzip">${gzipSync(
    readFileSync(join(pkgDir, 'turnover_wasm_bg.wasm')),
    { level: constants.Z_BEST_COMPRESSION },
  ).toString('base64')}</script>`,
  // The id lets www/traces.js reuse this text as the start of its Web
  // Worker's source (a Blob URL), so the glue is in the page only once.
  // `var`, not `let`: the page starts a fresh core after an internal error
  // by running this same script again, which a `let` would refuse.
  bindings: `<script id="turnover-bindings">\n${scriptSafe(read(join(pkgDir, 'turnover_wasm.js')).replace(/^let wasm_bindgen = /m, 'var wasm_bindgen = '))}\n</script>`,
};
// The app block holds one or more <script type="module" src="NAME.js">
// tags; each becomes an inline module with that file's text, in order.
const appBlock = page.match(/<!-- turnover:app -->([\s\S]*?)<!-- \/turnover:app -->/);
if (appBlock) {
  const sources = [...appBlock[1].matchAll(/<script type="module" src="([\w.-]+\.js)"><\/script>/g)].map((m) => m[1]);
  if (sources.length === 0) {
    console.error('assemble: the turnover:app block names no module script');
    process.exit(1);
  }
  blocks.app = sources
    .map((name) => `<script type="module">\n${scriptSafe(read(join(here, name)))}\n</script>`)
    .join('\n');
}
for (const [name, replacement] of Object.entries(blocks)) {
  const pattern = new RegExp(`<!-- turnover:${name} -->[\\s\\S]*?<!-- /turnover:${name} -->`);
  if (!pattern.test(page)) {
    console.error(`assemble: www/index.html has no turnover:${name} block`);
    process.exit(1);
  }
  page = page.replace(pattern, () => replacement);
}
mkdirSync(dirname(outFile), { recursive: true });
writeFileSync(outFile, page);
console.log(`${outFile}: ${page.length} bytes`);
