/**
 * Preload for `node --import ./test/helpers/no-network.mjs ...`: every way Node offers to open a
 * network connection throws, so a command that tried one would fail. Worker threads inherit
 * the parent's execArgv, so they load this module too.
 *
 * Blocked: net.connect / net.createConnection / net.Socket#connect, tls.connect, dgram.createSocket,
 * http(s).request / get, http2.connect, globalThis.fetch / WebSocket.
 */
import dgram from 'node:dgram';
import http from 'node:http';
import http2 from 'node:http2';
import https from 'node:https';
import { syncBuiltinESMExports } from 'node:module';
import net from 'node:net';
import tls from 'node:tls';

const MARK = 'sojourn-no-network';

function blocked(what) {
  return function () {
    throw new Error(`${MARK}: ${what} called; this process must not use the network`);
  };
}

net.connect = blocked('net.connect');
net.createConnection = blocked('net.createConnection');
net.Socket.prototype.connect = blocked('net.Socket#connect');
tls.connect = blocked('tls.connect');
dgram.createSocket = blocked('dgram.createSocket');
http.request = blocked('http.request');
http.get = blocked('http.get');
https.request = blocked('https.request');
https.get = blocked('https.get');
http2.connect = blocked('http2.connect');
globalThis.fetch = blocked('fetch');
if ('WebSocket' in globalThis) globalThis.WebSocket = blocked('WebSocket');
// Make `import { connect } from 'node:net'` and friends see the replacements too.
syncBuiltinESMExports();
