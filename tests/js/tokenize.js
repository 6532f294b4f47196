#!/usr/bin/env node
// TextMate grammar + documents (JSON on stdin) -> tokens with scopes (JSON on stdout).
//
// Input:  {"grammar": "path/to/x.tmLanguage.json", "documents": {"name": "text", ...}}
// Output: {"regexes": N, "documents": {"name": [[{"text", "start", "end", "scopes"}, ...] per line]}}
//
// Every regular expression of the grammar is compiled on its own first, so a
// pattern that Oniguruma rejects fails loudly even if no sample reaches it.
'use strict';

const fs = require('fs');
const vsctm = require('vscode-textmate');
const oniguruma = require('vscode-oniguruma');

function readStdin() {
  return fs.readFileSync(0, 'utf8');
}

async function loadOniguruma() {
  const bytes = fs.readFileSync(require.resolve('vscode-oniguruma/release/onig.wasm'));
  // A Node Buffer may view a larger shared pool: hand over exactly its bytes.
  await oniguruma.loadWASM(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength));
  return {
    createOnigScanner: (patterns) => new oniguruma.OnigScanner(patterns),
    createOnigString: (text) => new oniguruma.OnigString(text),
  };
}

function collectRegexes(node, where, out) {
  if (Array.isArray(node)) {
    node.forEach((item, i) => collectRegexes(item, `${where}[${i}]`, out));
  } else if (node && typeof node === 'object') {
    for (const [key, value] of Object.entries(node)) {
      if ((key === 'match' || key === 'begin' || key === 'end' || key === 'while') && typeof value === 'string') {
        out.push({ where: `${where}.${key}`, source: value });
      } else {
        collectRegexes(value, `${where}.${key}`, out);
      }
    }
  }
  return out;
}

function checkRegexes(rawGrammar) {
  const regexes = collectRegexes(rawGrammar, '$', []);
  for (const { where, source } of regexes) {
    try {
      new oniguruma.OnigScanner([source]).dispose();
    } catch (err) {
      throw new Error(`regex at ${where} does not compile: ${source}: ${err.message || err}`);
    }
  }
  return regexes.length;
}

async function main() {
  const request = JSON.parse(readStdin());
  const grammarPath = request.grammar;
  const grammarText = fs.readFileSync(grammarPath, 'utf8');
  const onigLib = await loadOniguruma();
  const regexCount = checkRegexes(JSON.parse(grammarText));

  const rawGrammar = vsctm.parseRawGrammar(grammarText, grammarPath);
  const registry = new vsctm.Registry({
    onigLib: Promise.resolve(onigLib),
    loadGrammar: async (scopeName) => (scopeName === rawGrammar.scopeName ? rawGrammar : null),
  });
  const grammar = await registry.loadGrammar(rawGrammar.scopeName);
  if (!grammar) {
    throw new Error(`grammar ${rawGrammar.scopeName} did not load`);
  }

  const documents = {};
  for (const [name, text] of Object.entries(request.documents)) {
    let ruleStack = vsctm.INITIAL;
    const lines = [];
    for (const line of text.split(/\r?\n/)) {
      const result = grammar.tokenizeLine(line, ruleStack);
      lines.push(result.tokens.map((t) => ({
        text: line.substring(t.startIndex, t.endIndex),
        start: t.startIndex,
        end: t.endIndex,
        scopes: t.scopes,
      })));
      ruleStack = result.ruleStack;
    }
    documents[name] = lines;
  }
  process.stdout.write(JSON.stringify({ regexes: regexCount, documents }));
}

main().catch((err) => {
  process.stderr.write(`tokenize.js: ${err && err.stack ? err.stack : err}\n`);
  process.exit(1);
});
