/**
 * faults_http: malformed and hostile requests against a real `plumbline
 * serve` process on loopback (its own state schema, no schedule run): broken
 * request lines and targets, oversized and too many headers, wrong methods,
 * smuggling-shaped framing, odd paths, and bodies sent byte by byte. Every
 * request must get a 4xx answer, the process must stay up, and its heap
 * must come back to where it started.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { connect } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { setTimeout as sleep } from 'node:timers/promises';
import { pathToFileURL } from 'node:url';
import pg from 'pg';
import { quoteIdent } from '../../service/db/sql.js';
import type { FaultEnv, FaultFigure, FaultSection } from './section.js';

const REQUESTS = 5000;
const CONCURRENCY = 48;
/** Heap growth still counted as "back to baseline" after the storm and a short rest. */
const HEAP_MARGIN_BYTES = 16 * 1024 * 1024;

interface Hostile {
  kind: string;
  /** The raw bytes to send, in pieces sent one after the other (pieces with a pause are "slow"). */
  pieces: string[];
  pauseMs?: number;
}

const junk = (n: number, seed: number) => Array.from({ length: n }, (_, i) => String.fromCharCode(33 + ((i * 7919 + seed * 104729) % 94))).join('');

/** The hostile request kinds; request i uses kind i modulo their number. */
export function hostileRequests(): Array<(i: number) => Hostile> {
  const line = (kind: string, text: string) => () => ({ kind, pieces: [`${text}\r\nHost: x\r\nConnection: close\r\n\r\n`] });
  return [
    line('unparsable target //[', 'GET //[ HTTP/1.1'),
    line('unparsable absolute target', 'GET http://[::1 HTTP/1.1'),
    line('broken percent escape', 'GET /incidents/%E0%A4%A HTTP/1.1'),
    line('percent-encoded NUL', 'GET /incidents/%00 HTTP/1.1'),
    line('path traversal', 'GET /../../../etc/passwd HTTP/1.1'),
    line('long path segment', `GET /incidents/${'a'.repeat(6000)} HTTP/1.1`),
    line('unknown method', 'BREW / HTTP/1.1'),
    line('wrong method POST', 'POST / HTTP/1.1\r\nContent-Length: 0'),
    line('wrong method PUT', 'PUT /healthz HTTP/1.1\r\nContent-Length: 0'),
    line('wrong method DELETE', 'DELETE /metrics HTTP/1.1'),
    line('wrong method PATCH', 'PATCH /readyz HTTP/1.1\r\nContent-Length: 0'),
    line('wrong method OPTIONS', 'OPTIONS * HTTP/1.1'),
    line('wrong method TRACE', 'TRACE / HTTP/1.1'),
    line('CONNECT', 'CONNECT example.com:443 HTTP/1.1'),
    line('bad HTTP version', 'GET / HTTP/9.9'),
    line('no version', 'GET /'),
    line('space in target', 'GET /a b HTTP/1.1'),
    line('control bytes in target', 'GET /\u0001\u0002 HTTP/1.1'),
    line('duplicate content-length', 'POST / HTTP/1.1\r\nContent-Length: 1\r\nContent-Length: 2'),
    line('content-length and chunked', 'POST / HTTP/1.1\r\nContent-Length: 4\r\nTransfer-Encoding: chunked'),
    line('bad chunk size', 'POST / HTTP/1.1\r\nTransfer-Encoding: chunked\r\n\r\nzz'),
    line('negative content-length', 'POST / HTTP/1.1\r\nContent-Length: -5'),
    line('header without colon', 'GET / HTTP/1.1\r\nthis is not a header'),
    line('header name with space', 'GET / HTTP/1.1\r\nBad Name: x'),
    line('bare LF line ends', 'GET / HTTP/1.1\nX: y'),
    (i) => ({ kind: 'random bytes', pieces: [`${junk(200, i)}\r\n\r\n`] }),
    () => ({ kind: 'oversized header (64 KB)', pieces: [`GET / HTTP/1.1\r\nHost: x\r\nX-Big: ${'b'.repeat(64 * 1024)}\r\nConnection: close\r\n\r\n`] }),
    () => ({ kind: 'oversized URL (100 KB)', pieces: [`GET /?q=${'q'.repeat(100 * 1024)} HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n`] }),
    () => ({ kind: 'too many headers (3,000)', pieces: [`GET / HTTP/1.1\r\nHost: x\r\n${Array.from({ length: 3000 }, (_, k) => `X-H${k}: v`).join('\r\n')}\r\nConnection: close\r\n\r\n`] }),
    () => ({ kind: 'slow headers, wrong method', pieces: ['POST / HTTP/1.1\r\n', 'Host: x\r\n', 'Content-Length: 4\r\n', 'Connection: close\r\n\r\n', 'ab', 'cd'], pauseMs: 60 }),
    () => ({ kind: 'slow body to a GET-only page', pieces: ['POST /healthz HTTP/1.1\r\nHost: x\r\nContent-Length: 10\r\nConnection: close\r\n\r\n', '12345', '67890'], pauseMs: 150 }),
    () => ({ kind: 'unknown page', pieces: ['GET /wp-admin/setup.php?x=<script> HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n'] }),
  ];
}

/** Sends one request and returns its status code (0: the connection closed without an answer). */
async function send(port: number, request: Hostile): Promise<number> {
  return await new Promise((resolve) => {
    let received = '';
    const socket = connect(port, '127.0.0.1', () => {
      void (async () => {
        for (const piece of request.pieces) {
          if (socket.destroyed) return;
          socket.write(piece);
          if (request.pauseMs) await sleep(request.pauseMs);
        }
      })();
    });
    const done = () => {
      const match = /^HTTP\/1\.[01] (\d{3})/.exec(received);
      resolve(match ? Number(match[1]) : 0);
    };
    socket.setEncoding('latin1');
    socket.setTimeout(15_000, () => socket.destroy());
    socket.on('data', (chunk: string) => {
      received += chunk;
      // Enough to read the status; the server may keep the socket for more requests.
      if (received.includes('\r\n')) socket.destroy();
    });
    socket.on('error', () => undefined);
    socket.on('close', done);
  });
}

async function heapUsed(port: number): Promise<number> {
  const text = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
  const match = /^plumbline_nodejs_heap_size_used_bytes (\S+)$/m.exec(text);
  if (!match) throw new Error('no heap figure in /metrics');
  return Number(match[1]);
}

/** Starts `plumbline serve` (no catch-up pass) on a copy of the demo config with its own state schema; resolves to its port. */
async function startServe(url: string, schema: string, root: string): Promise<{ child: ChildProcess; port: number }> {
  cpSync('config', join(root, 'config'), { recursive: true });
  const file = join(root, 'config', 'plumbline.yaml');
  writeFileSync(file, readFileSync(file, 'utf8').replace('schema: plumbline', `schema: ${schema}`));
  const tsx = pathToFileURL(createRequire(import.meta.url).resolve('tsx')).href;
  const child = spawn(process.execPath, ['--import', tsx, join(process.cwd(), 'service', 'cli', 'main.ts'), 'serve', '--port', '0', '--host', '127.0.0.1', '--no-catch-up'], {
    cwd: root,
    env: { ...process.env, PLUMBLINE_WAREHOUSE_URL: url, PLUMBLINE_STATE_URL: '', PLUMBLINE_LOG_LEVEL: 'fatal' },
    stdio: ['ignore', 'pipe', 'inherit'],
  });
  const port = await new Promise<number>((resolve, reject) => {
    let out = '';
    const timer = setTimeout(() => reject(new Error('serve did not start within 60 s')), 60_000);
    child.stdout!.setEncoding('utf8');
    child.stdout!.on('data', (chunk: string) => {
      out += chunk;
      const match = /serving at http:\/\/127\.0\.0\.1:(\d+)\//.exec(out);
      if (match) {
        clearTimeout(timer);
        resolve(Number(match[1]));
      }
    });
    child.once('exit', (code) => reject(new Error(`serve exited with ${code} before listening`)));
  });
  return { child, port };
}

async function run(env: FaultEnv): Promise<FaultFigure[]> {
  const url = await env.database();
  const schema = `faults_http_${Math.random().toString(16).slice(2, 10)}`;
  const root = mkdtempSync(join(tmpdir(), 'plumbline-faults-http-'));
  const { child, port } = await startServe(url, schema, root);
  let exited: number | null | undefined;
  child.once('exit', (code) => (exited = code));
  try {
    const kinds = hostileRequests();
    // Warm up the pages and the metrics, then take the baseline.
    for (let k = 0; k < 50; k++) await send(port, kinds[k % kinds.length]!(k));
    await sleep(1000);
    const baseline = await heapUsed(port);
    const statuses = new Map<string, Map<number, number>>();
    let next = 0;
    const started = performance.now();
    await Promise.all(
      Array.from({ length: CONCURRENCY }, async () => {
        while (next < REQUESTS && exited === undefined) {
          const i = next++;
          const request = kinds[i % kinds.length]!(i);
          const status = await send(port, request);
          const byStatus = statuses.get(request.kind) ?? new Map<number, number>();
          byStatus.set(status, (byStatus.get(status) ?? 0) + 1);
          statuses.set(request.kind, byStatus);
        }
      }),
    );
    const seconds = (performance.now() - started) / 1000;
    const alive = exited === undefined && (await fetch(`http://127.0.0.1:${port}/healthz`).then((r) => r.status === 200).catch(() => false));
    await sleep(3000);
    const after = alive ? await heapUsed(port) : Number.NaN;
    let sent = 0;
    let fourxx = 0;
    const other: string[] = [];
    for (const [kind, byStatus] of statuses) {
      for (const [status, count] of byStatus) {
        sent += count;
        if (status >= 400 && status < 500) fourxx += count;
        else other.push(`${kind}: ${count} x ${status === 0 ? 'no answer' : status}`);
      }
    }
    if (other.length > 0) env.log(`faults_http: answers other than 4xx:\n  ${other.join('\n  ')}`);
    const growth = after - baseline;
    return [
      { name: 'faults_http_requests', value: sent, target: `>= ${REQUESTS}`, met: sent >= REQUESTS },
      { name: 'faults_http_kinds', value: kinds.length },
      { name: 'faults_http_crashes', value: alive ? 0 : 1, target: '0', met: alive },
      { name: 'faults_http_4xx_share', value: sent === 0 ? 0 : Number((fourxx / sent).toFixed(4)), target: '1', met: fourxx === sent },
      { name: 'faults_http_requests_per_s', value: Math.round(sent / seconds) },
      { name: 'faults_http_heap_baseline_mb', value: Number((baseline / 2 ** 20).toFixed(1)) },
      { name: 'faults_http_heap_after_mb', value: Number((after / 2 ** 20).toFixed(1)), target: `<= baseline + ${HEAP_MARGIN_BYTES / 2 ** 20}`, met: growth <= HEAP_MARGIN_BYTES },
    ];
  } finally {
    child.kill('SIGTERM');
    await new Promise((resolve) => (exited !== undefined ? resolve(undefined) : child.once('exit', resolve)));
    rmSync(root, { recursive: true, force: true });
    const pool = new pg.Pool({ connectionString: url, max: 1 });
    await pool.query(`drop schema if exists ${quoteIdent(schema)} cascade`);
    await pool.end();
  }
}

export const httpFaults: FaultSection = { name: 'http', run };
