// Settings -> how VS Code starts the pactlang language server.
// Kept apart from extension.js (and free of the `vscode` module) so that the
// tests can start the server exactly as the extension does, under plain node.
'use strict';

const DEFAULT_COMMAND = 'pactlang';
const DEFAULT_ARGS = ['serve'];

/**
 * The executable for vscode-languageclient: `pactlang serve` over standard
 * input and output, unless the settings name another command (a virtual
 * environment's `pactlang`, or `python` with `-m pactlang serve`).
 */
function serverOptions(settings) {
  const given = settings || {};
  const command = typeof given.command === 'string' && given.command.trim() ? given.command.trim() : DEFAULT_COMMAND;
  const args = Array.isArray(given.args) ? given.args.map(String) : DEFAULT_ARGS.slice();
  const executable = { command, args, options: { env: process.env } };
  return { run: executable, debug: executable };
}

/** Which documents the client sends to the server: saved and unsaved agreements. */
const DOCUMENT_SELECTOR = [
  { scheme: 'file', language: 'deal' },
  { scheme: 'untitled', language: 'deal' },
];

module.exports = { serverOptions, DOCUMENT_SELECTOR, DEFAULT_COMMAND, DEFAULT_ARGS };
