// Start the packaged VS Code extension's language client under plain node,
// against the real `pactlang serve`, and print what the server answered.
//
//   node vscode_client.js EXTENSION_DIR PYTHON DOCUMENT.deal
//
// EXTENSION_DIR is an unpacked .vsix (its `extension/` folder): the client
// code, vscode-languageclient and its dependencies all come from there, so a
// package missing a file fails here. Only the `vscode` module is a stand-in
// (a headless VS Code cannot be downloaded in CI): every API the client
// touches answers with a harmless no-op, except the settings, which point
// `pactlang.server.command` at PYTHON with `-m pactlang serve`.
// Prints one JSON line: {capabilities, serverName, diagnostics, hover}.
'use strict';

const fs = require('fs');
const path = require('path');
const Module = require('module');

const [extensionDir, python, documentPath] = process.argv.slice(2);

// Any property is a callable no-op that returns another such stand-in;
// nothing is iterable but empty, and nothing is a promise.
const noOp = {
  get(target, name) {
    if (name === 'then' || name === '__esModule') return undefined;
    if (name === Symbol.iterator) return function* empty() {};
    if (name === Symbol.toPrimitive) return () => '';
    if (!(name in target)) target[name] = new Proxy(function standIn() {}, noOp);
    return target[name];
  },
  construct: () => new Proxy(function standIn() {}, noOp),
  apply: () => new Proxy(function standIn() {}, noOp),
};
const settings = { 'server.command': python, 'server.args': ['-m', 'pactlang', 'serve'] };
const vscode = new Proxy({
  version: '1.90.0',
  env: new Proxy({ language: 'en', appName: 'node', machineId: 'test', sessionId: 'test' }, noOp),
  workspace: new Proxy({
    textDocuments: [],
    workspaceFolders: undefined,
    getConfiguration: () => ({ get: (key, fallback) => (key in settings ? settings[key] : fallback) }),
  }, noOp),
}, noOp);
const load = Module._load;
Module._load = function loadWithStandIn(request, ...rest) {
  return request === 'vscode' ? vscode : load.call(this, request, ...rest);
};

function fail(message) {
  console.error(message);
  process.exit(1);
}

(async () => {
  const manifest = JSON.parse(fs.readFileSync(path.join(extensionDir, 'package.json'), 'utf8'));
  const extension = require(path.resolve(extensionDir, manifest.main));
  const client = await extension.activate({ subscriptions: [] });
  const uri = 'file://' + path.resolve(documentPath);
  const diagnostics = new Promise((resolve) => {
    client.onNotification('textDocument/publishDiagnostics', (params) => {
      if (params.uri === uri && params.diagnostics.length) resolve(params.diagnostics);
    });
  });
  const text = fs.readFileSync(documentPath, 'utf8');
  await client.sendNotification('textDocument/didOpen', {
    textDocument: { uri, languageId: 'deal', version: 1, text },
  });
  const timeout = new Promise((_, reject) => setTimeout(() => reject(new Error('no diagnostics in 60 s')), 60000));
  const found = await Promise.race([diagnostics, timeout]);
  const hover = await client.sendRequest('textDocument/hover', {
    textDocument: { uri }, position: { line: 0, character: 0 },
  });
  console.log(JSON.stringify({
    capabilities: client.initializeResult.capabilities,
    serverName: client.initializeResult.serverInfo && client.initializeResult.serverInfo.name,
    diagnostics: found,
    hover,
  }));
  await extension.deactivate();
  process.exit(0);
})().catch((error) => fail(error && error.stack ? error.stack : String(error)));
