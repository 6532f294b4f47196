// VS Code extension entry: the language client that runs `pactlang serve`
// for .deal documents (diagnostics, verdicts on hover, formatting,
// definitions, completion). Highlighting comes from the grammar alone.
'use strict';

const vscode = require('vscode');
const { LanguageClient } = require('vscode-languageclient/node');
const { serverOptions, DOCUMENT_SELECTOR } = require('./server');

let client;

function settings() {
  const config = vscode.workspace.getConfiguration('pactlang');
  return { command: config.get('server.command'), args: config.get('server.args') };
}

async function activate(context) {
  client = new LanguageClient('pactlang', 'pactlang language server', serverOptions(settings()), {
    documentSelector: DOCUMENT_SELECTOR,
  });
  context.subscriptions.push({ dispose: () => (client ? client.stop() : undefined) });
  await client.start();
  return client;
}

function deactivate() {
  const running = client;
  client = undefined;
  return running ? running.stop() : undefined;
}

module.exports = { activate, deactivate };
