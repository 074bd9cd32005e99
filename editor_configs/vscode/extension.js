// VS Code client for regvet's language server (`regvet serve`, stdio).
"use strict";
const vscode = require("vscode");
const { LanguageClient, TransportKind } = require("vscode-languageclient/node");

let client;

function serverCommand() {
  // regvet.executable is a restricted setting: in an untrusted workspace VS Code
  // returns the user-level value only.
  const path = vscode.workspace.getConfiguration("regvet").get("executable") || "regvet";
  return { command: path, args: ["serve"], transport: TransportKind.stdio };
}

function createClient() {
  const clientOptions = {
    documentSelector: [
      { scheme: "file", language: "python" },
      { scheme: "untitled", language: "python" },
    ],
    // Notebook cells arrive through notebookDocument/* (the server declares notebook sync).
    synchronize: { configurationSection: "regvet" }, // -> workspace/didChangeConfiguration
    outputChannelName: "regvet",
  };
  return new LanguageClient("regvet", "regvet", serverCommand(), clientOptions);
}

async function restart() {
  if (client) await client.stop();
  client = createClient();
  await client.start();
}

// Runtime mode EXECUTES the file: only on request, and only in a trusted workspace.
async function runFits() {
  const editor = vscode.window.activeTextEditor;
  if (!editor || !client) return;
  if (!vscode.workspace.isTrusted) {
    vscode.window.showWarningMessage("regvet: running the fits executes the code; trust this workspace first.");
    return;
  }
  const uri = editor.document.uri.toString();
  const answer = await client.sendRequest("workspace/executeCommand", { command: "regvet.runFits", arguments: [uri] });
  if (answer && answer.failed) vscode.window.showWarningMessage(`regvet: the run stopped: ${answer.failed}`);
}

async function activate(context) {
  context.subscriptions.push(
    vscode.commands.registerCommand("regvet.restart", restart),
    vscode.commands.registerCommand("regvet.runFitsOfFile", runFits),
    vscode.workspace.onDidChangeConfiguration((event) => {
      if (event.affectsConfiguration("regvet.executable")) return restart();
    }),
    vscode.workspace.onDidGrantWorkspaceTrust(restart), // the workspace's regvet.executable now applies
  );
  await restart();
}

async function deactivate() {
  if (client) await client.stop();
  client = undefined;
}

module.exports = { activate, deactivate };
