// Builds the single self-contained page: www/index.html with the style
// sheet, the wasm-bindgen glue, the WebAssembly binary (gzip, as text) and app.js
// written into it, so that it works from file:// with no server and no
// network. Uses Node's standard library only.
//
// Last, the page's Content-Security-Policy is rewritten so that script-src
// lists the sha256 hash of every inline script that runs (and
// 'wasm-unsafe-eval' for the WebAssembly), with no 'unsafe-inline'; the
// build fails when a script would not be covered (an external src, an
// inline event-handler attribute, a hash missing from the policy).
//
//   node www/assemble.mjs PKG_DIR OUT_FILE

import { readFileSync, writeFileSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { gzipSync, constants } from 'node:zlib';
import { fileURLToPath } from 'node:url';
import { createHash } from 'node:crypto';

const here = dirname(fileURLToPath(import.meta.url));
const [pkgDir, outFile] = process.argv.slice(2);
if (!pkgDir || !outFile) {
  console.error('usage: node www/assemble.mjs PKG_DIR OUT_FILE');
  process.exit(2);
}

const read = (path) => readFileSync(path, 'utf8');
// The page's own modules and the wasm-bindgen glue travel without their
// whole-line comments and indentation (the sources keep them): a line whose
// first characters are `//`, or a block comment that starts a line, outside
// any template literal, and the leading white space of every line outside
// one. Lines stay lines, so line-level behaviour is the source's.
function withoutCommentLines(text) {
  const kept = [];
  let inTemplate = false;
  let inBlock = false;
  for (const line of text.split('\n')) {
    const trimmed = line.trim();
    if (!inTemplate) {
      if (inBlock) {
        if (trimmed.includes('*/')) {
          inBlock = false;
          if (!trimmed.endsWith('*/')) kept.push(line);
        }
        continue;
      }
      if (trimmed.startsWith('//')) continue;
      if (trimmed.startsWith('/*')) {
        if (!trimmed.includes('*/')) inBlock = true;
        else if (!trimmed.endsWith('*/')) kept.push(line);
        continue;
      }
    }
    // Indentation is dropped too, except inside a template literal, where
    // it is part of the text.
    kept.push(inTemplate ? line : line.trimStart());
    // Backticks not escaped open or close a template literal.
    const ticks = (line.replace(/\\./g, '').match(/`/g) ?? []).length;
    if (ticks % 2 === 1) inTemplate = !inTemplate;
  }
  return kept.join('\n');
}

// Text placed inside a <script> element must not close it early.
const scriptSafe = (text) => text.replace(/<\/script/gi, '<\\/script').replace(/<!--/g, '<\\!--');

// The compressed WebAssembly is written with 85 characters (5 for every 4
// bytes, where base64 needs 5⅓): printable ASCII without the space and the
// seven characters that mean something in HTML or in a JavaScript string
// (" & ' < > \ `), so no run of them can close the <script> element that
// holds them. The bytes are padded with zeros to a multiple of 4;
// `data-bytes` is their true number. www/unpack.js decodes it.
const TEXT85 = [...Array(94).keys()].map((k) => String.fromCharCode(33 + k)).filter((c) => !'"&\'<>\\`'.includes(c)).slice(0, 85).join('');
if (TEXT85.length !== 85) throw new Error('assemble: the 85-character alphabet is short');
function encode85(bytes) {
  const padded = new Uint8Array(Math.ceil(bytes.length / 4) * 4);
  padded.set(bytes);
  const out = [];
  const digits = new Array(5);
  for (let i = 0; i < padded.length; i += 4) {
    let n = ((padded[i] << 24) >>> 0) + (padded[i + 1] << 16) + (padded[i + 2] << 8) + padded[i + 3];
    for (let d = 4; d >= 0; d--) {
      digits[d] = TEXT85[n % 85];
      n = Math.floor(n / 85);
    }
    out.push(digits.join(''));
  }
  return out.join('');
}
// The decoder's rule, run here on what was written: the page must get back
// the very bytes.
function decode85(text, length) {
  const value = new Uint8Array(128).fill(255);
  for (let k = 0; k < 85; k++) value[TEXT85.charCodeAt(k)] = k;
  const bytes = new Uint8Array((text.length / 5) * 4);
  for (let i = 0, o = 0; i < text.length; i += 5, o += 4) {
    let n = 0;
    for (let d = 0; d < 5; d++) n = n * 85 + value[text.charCodeAt(i + d)];
    bytes[o] = n >>> 24;
    bytes[o + 1] = (n >>> 16) & 255;
    bytes[o + 2] = (n >>> 8) & 255;
    bytes[o + 3] = n & 255;
  }
  return bytes.subarray(0, length);
}
const wasmGzip = gzipSync(readFileSync(join(pkgDir, 'turnover_wasm_bg.wasm')), { level: constants.Z_BEST_COMPRESSION });
const wasmText = encode85(wasmGzip);
if (Buffer.compare(Buffer.from(decode85(wasmText, wasmGzip.length)), wasmGzip) !== 0) {
  console.error('assemble: the 85-character text of the WebAssembly does not decode to its bytes');
  process.exit(1);
}

let page = read(join(here, 'index.html'));
const blocks = {
  style: `<style>\n${read(join(here, 'style.css'))}</style>`,
  // The binary is gzip-compressed (about a third of the size) and written
  // with the 85 characters above; the page inflates it with the browser's
  // DecompressionStream. The alphabet travels with it (data-text).
  // www/unpack.js, right after it, starts unpacking and compiling it while
  // the browser reads the rest of the page.
  wasm: `<script type="application/octet-stream" id="turnover-wasm" data-encoding="gzip" data-text="${TEXT85}" data-bytes="${wasmGzip.length}">${wasmText}</script>\n<script id="turnover-unpack">\n${scriptSafe(withoutCommentLines(read(join(here, 'unpack.js'))))}\n</script>`,
  // The id lets www/traces.js reuse this text as the start of its Web
  // Worker's source (a Blob URL), so the glue is in the page only once.
  // `var`, not `let`: the page starts a fresh core after an internal error
  // by running this same script again, which a `let` would refuse.
  bindings: `<script id="turnover-bindings">\n${scriptSafe(withoutCommentLines(read(join(pkgDir, 'turnover_wasm.js'))).replace(/^let wasm_bindgen = /m, 'var wasm_bindgen = '))}\n</script>`,
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
  // Each module must parse as it will run (after its comments and
  // indentation are dropped): a syntax error would stop the whole page.
  const scratch = mkdtempSync(join(tmpdir(), 'turnover-assemble-'));
  for (const name of sources) {
    const file = join(scratch, `${name}.mjs`);
    writeFileSync(file, withoutCommentLines(read(join(here, name))));
    const check = spawnSync(process.execPath, ['--check', file], { encoding: 'utf8' });
    if (check.status !== 0) {
      rmSync(scratch, { recursive: true, force: true });
      console.error(`assemble: www/${name} does not parse:\n${check.stderr}`);
      process.exit(1);
    }
  }
  rmSync(scratch, { recursive: true, force: true });
  blocks.app = sources
    .map((name) => `<script type="module">\n${scriptSafe(withoutCommentLines(read(join(here, name))))}\n</script>`)
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
// The HTML parser turns CRLF and CR into LF before a script's text is
// hashed by the browser; do the same so the hashes match.
page = page.replace(/\r\n?/g, '\n');
page = withScriptHashes(page);
mkdirSync(dirname(outFile), { recursive: true });
writeFileSync(outFile, page);
console.log(`${outFile}: ${page.length} bytes`);

function fail(message) {
  console.error(`assemble: ${message}`);
  process.exit(1);
}

// Types whose <script> elements the browser runs; JSON and octet-stream
// blocks are data, never executed, so they need no hash.
function runs(attributes) {
  const type = /\stype\s*=\s*"([^"]*)"/i.exec(attributes)?.[1]?.trim().toLowerCase();
  return type === undefined || type === '' || type === 'module' || type === 'text/javascript' || type === 'application/javascript';
}

// Every inline script the browser would run, with the CSP source
// expression of its hash.
function runningScripts(html) {
  const scripts = [];
  for (const m of html.matchAll(/<script(\s[^>]*)?>([\s\S]*?)<\/script>/gi)) {
    const attributes = m[1] ?? '';
    if (!runs(attributes)) continue;
    if (/\ssrc\s*=/i.test(attributes)) fail(`a script loads an external file (${attributes.trim()}); inline it`);
    const hash = createHash('sha256').update(m[2], 'utf8').digest('base64');
    scripts.push({ attributes: attributes.trim(), source: `'sha256-${hash}'` });
  }
  return scripts;
}

function withScriptHashes(html) {
  const markup = html.replace(/<script(\s[^>]*)?>[\s\S]*?<\/script>/gi, '<script></script>');
  const handler = /<[a-z][^>]*\son[a-z]+\s*=/i.exec(markup);
  if (handler) fail(`an inline event-handler attribute cannot be allowed by a hash: ${handler[0]}`);
  if (/javascript:/i.test(markup)) fail('a javascript: URL cannot be allowed by a hash');

  const meta = /(<meta http-equiv="Content-Security-Policy" content=")([^"]*)(")/i;
  const found = meta.exec(html);
  if (!found) fail('www/index.html has no Content-Security-Policy meta element');
  const scripts = runningScripts(html);
  const hashes = [...new Set(scripts.map((s) => s.source))];
  const directives = new Map(
    found[2].split(';').map((d) => d.trim()).filter(Boolean).map((d) => {
      const [name, ...values] = d.split(/\s+/);
      return [name.toLowerCase(), values];
    }),
  );
  directives.set('script-src', ["'wasm-unsafe-eval'", ...hashes]);
  directives.set('base-uri', ["'none'"]);
  directives.set('connect-src', ["'none'"]);
  directives.set('worker-src', ['blob:']);
  const policy = [...directives].map(([name, values]) => [name, ...values].join(' ')).join('; ');
  const rewritten = html.replace(meta, (_, open, __, close) => open + policy + close);

  // Check the result as the browser will see it.
  const finalPolicy = meta.exec(rewritten)[2];
  const scriptSrc = finalPolicy.split(';').map((d) => d.trim()).find((d) => d.startsWith('script-src ')).split(/\s+/);
  if (scriptSrc.includes("'unsafe-inline'")) fail("script-src still allows 'unsafe-inline'");
  for (const script of runningScripts(rewritten)) {
    if (!scriptSrc.includes(script.source)) fail(`the inline script <script ${script.attributes}> is not covered by the policy`);
  }
  console.log(`Content-Security-Policy: ${scripts.length} inline script(s) allowed by hash`);
  return rewritten;
}
