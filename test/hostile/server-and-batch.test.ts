// Fault campaign against the loopback server and `rankfold batch`: generated hostile cases, each its own test.
// Server: bad upload names, Host/token/Origin variants, odd methods and request targets, path traversal.
// Batch: a folder holding every kind of special file beside one good scan.
// Sources: RFC 9112 §3.2 (400 for a missing Host, more than one Host line or an invalid Host value) and
// §3.2.2 (absolute-form), RFC 9110 §7.2 (Host) and §15.5.6 (405), RFC 3986 §2.5 (percent-encoded UTF-8);
// POSIX open() (O_RDONLY on a FIFO blocks until a writer opens it), mkfifo(), symlink(); ELOOP from memory.
import { spawnSync } from 'node:child_process';
import { mkdirSync, readdirSync, readFileSync, symlinkSync, writeFileSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { createServer as createNetServer, type Server as NetServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BatchRow } from '../../src-main/contract';
import { BUDGET, built, hashTree, isRoot, jsonLines, manifestRows, runBatchCli } from '../batch/cli-harness';
import { writePage } from '../batch/images';
import { hit, rawHttp, startTestServer, type TestServer } from '../server/harness';

let server: TestServer;
const port = () => server.srv.port;
const token = () => server.srv.token;

beforeAll(async () => {
  server = await startTestServer();
});
afterAll(async () => {
  await server?.close();
});

// ---- upload names ----------------------------------------------------------------------------------

/** Query values (already percent-encoded as sent) that must get 400 and the message pattern. */
const BAD_NAMES: [label: string, query: string, message: RegExp][] = [
  ['..', 'name=..', /^Upload name "\.\." is not a file name$/],
  ['.', 'name=.', /^Upload name "\." is not a file name$/],
  ['empty', 'name=', /^Upload name is empty/],
  ['no name parameter', 'nom=a.png', /^Upload needs \?name=/],
  ['name twice', 'name=a.png&name=b.png', /^Upload takes one \?name=/],
  ['%2e%2e', 'name=%2e%2e', /is not a file name$/],
  ['%2E%2E (upper case)', 'name=%2E%2E', /is not a file name$/],
  ['.%2e', 'name=.%2e', /is not a file name$/],
  ['a/b.png (encoded slash)', 'name=a%2Fb.png', /contains a folder separator/],
  ['../../etc/passwd.png', 'name=..%2F..%2Fetc%2Fpasswd.png', /contains a folder separator/],
  ['/etc/scan.png (absolute)', 'name=%2Fetc%2Fscan.png', /contains a folder separator/],
  ['..\\..\\win.png', 'name=..%5C..%5Cwin.png', /contains a folder separator/],
  ['C:\\scan.png', 'name=C%3A%5Cscan.png', /contains a folder separator/],
  ['a\\b.png', 'name=a%5Cb.png', /contains a folder separator/],
  ['NUL alone', 'name=%00', /NUL or other control character/],
  ['NUL inside', 'name=a%00.png', /NUL or other control character/],
  ['NUL before the extension', 'name=scan.png%00.txt', /NUL or other control character/],
  ['line feed', 'name=a%0A.png', /NUL or other control character/],
  ['CR LF (header injection)', 'name=a%0D%0ASet-Cookie%3A%20x.png', /NUL or other control character/],
  ['escape sequence', 'name=%1B%5B31mred.png', /NUL or other control character/],
  ['DEL', 'name=a%7F.png', /NUL or other control character/],
  ['C1 NEL', 'name=a%C2%85.png', /NUL or other control character/],
  ['tab', 'name=a%09.png', /NUL or other control character/],
  ['256 ASCII bytes', `name=${'x'.repeat(252)}.png`, /longer than 255 bytes/],
  ['258 bytes of CJK', `name=${'%E6%9D%B1'.repeat(85)}.png`, /longer than 255 bytes/],
  ['4 kB name', `name=${'y'.repeat(4096)}.png`, /longer than 255 bytes/],
  ['lone %FF', 'name=%FF.png', /not valid percent-encoded UTF-8/],
  ['truncated UTF-8 %C3', 'name=%C3.png', /not valid percent-encoded UTF-8/],
  ['truncated 3-byte %E6%9D', 'name=%E6%9D.png', /not valid percent-encoded UTF-8/],
  ['overlong ".." %C0%AE%C0%AE', 'name=%C0%AE%C0%AE', /not valid percent-encoded UTF-8/],
  ['encoded surrogate %ED%A0%80', 'name=%ED%A0%80.png', /not valid percent-encoded UTF-8/],
  ['bad escape %G1', 'name=%G1.png', /not valid percent-encoded UTF-8/],
  ['lone %', 'name=scan%.png', /not valid percent-encoded UTF-8/],
  ['double-encoded .. (%252e%252e, not a scan type)', 'name=%252e%252e', /is not a scan Rankfold reads/],
  ['not a scan type', 'name=notes.txt', /notes\.txt: is not a scan Rankfold reads/],
  ['no extension', 'name=scan', /scan: is not a scan Rankfold reads/],
];

describe('upload names that are not plain scan file names get 400 and one clear sentence', () => {
  it.each(BAD_NAMES)('%s', async (_label, query, message) => {
    const r = await hit(server.srv, `/api/upload?${query}`, {
      method: 'POST',
      headers: { 'X-Rankfold-Token': token(), 'Content-Type': 'application/octet-stream' },
      body: Buffer.from('not really a scan'),
    });
    expect(r.status, r.body).toBe(400);
    const err = JSON.parse(r.body).error;
    expect(err.message).toMatch(message);
    expect(err.message.length).toBeLessThan(300); // no echo of a 4 kB name
    expect(err.message.includes('\n')).toBe(false);
  });
});

const GOOD_NAMES: [label: string, query: string][] = [
  ['plain', 'name=scan.png'],
  ['space as %20', 'name=scan%20one.png'],
  ['space as +', 'name=scan+one.tif'],
  ['CJK', 'name=%E6%9D%B1.tif'],
  ['leading dots', 'name=..scan.png'],
  ['two dots inside', 'name=scan..png'],
  ['exactly 255 bytes', `name=${'z'.repeat(251)}.png`],
];

describe('plain scan file names are still accepted', () => {
  it.each(GOOD_NAMES)('%s', async (_label, query) => {
    const r = await hit(server.srv, `/api/upload?${query}`, {
      method: 'POST',
      headers: { 'X-Rankfold-Token': token(), 'Content-Type': 'application/octet-stream' },
      body: Buffer.from('bytes'),
    });
    expect(r.status, r.body).toBe(200);
    expect(JSON.parse(r.body).value).toMatch(/^[A-Za-z0-9_-]+$/);
  });
});

// ---- raw requests: Host, token, methods, targets ------------------------------------------------------

type RawCase = [label: string, head: () => string, status: number, message?: RegExp];
const H = () => `Host: 127.0.0.1:${port()}`;
const T = () => `X-Rankfold-Token: ${token()}`;
const JSON_POST =
  (target: string, extra: string[] = []) =>
  () =>
    [`POST ${target} HTTP/1.1`, H(), 'Content-Type: application/json', 'Content-Length: 2', ...extra].join(
      '\r\n',
    );

const RAW: RawCase[] = [
  // Host (RFC 9112 §3.2): missing, repeated or invalid → 400; valid but not ours → 403.
  ['two identical Host lines', () => `GET / HTTP/1.1\r\n${H()}\r\n${H()}`, 400, /2 Host headers/],
  ['ours then a foreign Host', () => `GET / HTTP/1.1\r\n${H()}\r\nHost: evil.example`, 400, /2 Host headers/],
  ['a foreign then our Host', () => `GET / HTTP/1.1\r\nHost: evil.example\r\n${H()}`, 400, /2 Host headers/],
  ['three Host lines', () => `GET / HTTP/1.1\r\n${H()}\r\n${H()}\r\n${H()}`, 400, /3 Host headers/],
  ['Host and HOST', () => `GET / HTTP/1.1\r\n${H()}\r\nHOST: 127.0.0.1:${port()}`, 400, /2 Host headers/],
  [
    'two Host lines on an API call with the token',
    () => `POST /api/call/listSamples HTTP/1.1\r\n${H()}\r\n${H()}\r\n${T()}\r\nContent-Length: 0`,
    400,
    /2 Host headers/,
  ],
  ['no Host, HTTP/1.1', () => 'GET / HTTP/1.1', 400],
  ['no Host, HTTP/1.0', () => 'GET / HTTP/1.0', 400, /no Host header/],
  ['empty Host', () => 'GET / HTTP/1.1\r\nHost: ', 400],
  [
    'Host as a list',
    () => `GET / HTTP/1.1\r\nHost: 127.0.0.1:${port()}, evil.example`,
    400,
    /not a valid host/,
  ],
  ['Host with userinfo', () => `GET / HTTP/1.1\r\nHost: user@127.0.0.1:${port()}`, 400, /not a valid host/],
  ['Host with a path', () => `GET / HTTP/1.1\r\nHost: 127.0.0.1:${port()}/x`, 400, /not a valid host/],
  ['Host with inner space', () => `GET / HTTP/1.1\r\nHost: 127.0.0.1 :${port()}`, 400, /not a valid host/],
  ['foreign Host name', () => `GET / HTTP/1.1\r\nHost: attacker.example:${port()}`, 403, /not this loopback/],
  ['our address, wrong port', () => `GET / HTTP/1.1\r\nHost: 127.0.0.1:${port() + 1}`, 403],
  ['localhost without port', () => 'GET / HTTP/1.1\r\nHost: localhost', 403],
  ['IPv6 loopback', () => `GET / HTTP/1.1\r\nHost: [::1]:${port()}`, 403],
  ['trailing-dot name', () => `GET / HTTP/1.1\r\nHost: localhost.:${port()}`, 403],
  // Token: missing, wrong, repeated.
  ['API call without token', JSON_POST('/api/call/listSamples'), 401, /missing or wrong token/],
  ['API call with a wrong token', JSON_POST('/api/call/listSamples', ['X-Rankfold-Token: nope']), 401],
  ['API call with the token twice', () => JSON_POST('/api/call/listSamples', [T(), T()])(), 401],
  ['token in an empty header', JSON_POST('/api/call/listSamples', ['X-Rankfold-Token: ']), 401],
  ['upload without token', () => `POST /api/upload?name=a.png HTTP/1.1\r\n${H()}\r\nContent-Length: 0`, 401],
  ['event stream with a wrong token', () => `GET /api/events?token=x HTTP/1.1\r\n${H()}`, 401],
  // Origin and fetch metadata.
  [
    'foreign Origin with the token',
    () => JSON_POST('/api/call/listSamples', [T(), 'Origin: http://evil.example'])(),
    403,
  ],
  ['Origin null', () => JSON_POST('/api/call/listSamples', [T(), 'Origin: null'])(), 403],
  [
    'two Origin lines',
    () =>
      JSON_POST('/api/call/listSamples', [
        T(),
        `Origin: http://127.0.0.1:${port()}`,
        'Origin: http://evil.example',
      ])(),
    403,
  ],
  [
    'Sec-Fetch-Site: cross-site',
    () => JSON_POST('/api/call/listSamples', [T(), 'Sec-Fetch-Site: cross-site'])(),
    403,
  ],
  // Methods.
  ['TRACE', () => `TRACE / HTTP/1.1\r\n${H()}`, 405],
  ['DELETE a page file', () => `DELETE /index.html HTTP/1.1\r\n${H()}`, 405],
  ['PUT a page file', () => `PUT /index.html HTTP/1.1\r\n${H()}\r\nContent-Length: 0`, 405],
  ['PATCH', () => `PATCH / HTTP/1.1\r\n${H()}\r\nContent-Length: 0`, 405],
  ['OPTIONS', () => `OPTIONS / HTTP/1.1\r\n${H()}`, 405],
  ['PROPFIND', () => `PROPFIND / HTTP/1.1\r\n${H()}`, 405],
  ['CONNECT', () => `CONNECT 127.0.0.1:${port()} HTTP/1.1\r\n${H()}`, 405],
  ['GET on an API call', () => `GET /api/call/listSamples HTTP/1.1\r\n${H()}\r\n${T()}`, 405],
  ['DELETE on upload', () => `DELETE /api/upload?name=a.png HTTP/1.1\r\n${H()}\r\n${T()}`, 405],
  ['an unknown method token', () => `FROB / HTTP/1.1\r\n${H()}`, 400],
  // Request targets.
  ['OPTIONS *', () => `OPTIONS * HTTP/1.1\r\n${H()}`, 400, /must be a path/],
  [
    'absolute-form naming another host',
    () => `GET http://evil.example/ HTTP/1.1\r\n${H()}`,
    403,
    /not this loopback/,
  ],
  ['absolute-form https', () => `GET https://127.0.0.1:${port()}/ HTTP/1.1\r\n${H()}`, 400],
  ['authority-form on GET', () => `GET 127.0.0.1:${port()} HTTP/1.1\r\n${H()}`, 400],
  ['bad percent-encoding in a path', () => `GET /%FF HTTP/1.1\r\n${H()}`, 400],
  ['NUL in a path', () => `GET /index.html%00.png HTTP/1.1\r\n${H()}`, 400],
  ['line feed in a path', () => `GET /a%0Ab HTTP/1.1\r\n${H()}`, 400],
];

describe('malformed or foreign requests are refused with the right status', () => {
  it.each(RAW)('%s', async (_label, head, status, message) => {
    const r = await rawHttp(port(), head(), head().startsWith('POST') ? '{}' : '');
    expect(r.status, r.body).toBe(status);
    if (message) expect(JSON.parse(r.body).error.message).toMatch(message);
  });
});

// ---- path traversal: nothing outside the page folder is ever served -------------------------------------

const TRAVERSAL: string[] = [
  '/../../package.json',
  '/..%2f..%2fpackage.json',
  '/..%2F..%2Fpackage.json',
  '/%2e%2e/%2e%2e/package.json',
  '/%2e%2e%2f%2e%2e%2fpackage.json',
  '/%252e%252e/%252e%252e/package.json',
  '/..%5c..%5cpackage.json',
  '/%2e%2e%5c%2e%2e%5cpackage.json',
  '//etc/passwd',
  '/%2fetc%2fpasswd',
  '/.%2e/.%2e/package.json',
  '/renderer/../../package.json',
  '/%c0%ae%c0%ae/package.json',
  '/api/report/..%2f..%2f..%2fpackage.json',
  '/api/download/..%2f..%2fpackage.json',
];

describe('path traversal variants are refused (4xx) and never return a file from outside the page folder', () => {
  it.each(TRAVERSAL)('%s', async (target) => {
    const r = await rawHttp(port(), `GET ${target}?token=${token()} HTTP/1.1\r\n${H()}\r\n${T()}`);
    expect(r.status).toBeGreaterThanOrEqual(400);
    expect(r.status).toBeLessThan(500);
    expect(r.body).not.toContain('"name": "rankfold"');
    expect(r.body).not.toContain('root:');
  });
});

// ---- batch: special files of every kind ------------------------------------------------------------------

interface SpecialCase {
  kind: string;
  /** Path relative to IN_DIR. */
  path: string;
  make(abs: string, inDir: string): boolean | Promise<boolean>;
  note: RegExp;
}

const fifo = (abs: string) => spawnSync('mkfifo', [abs]).status === 0;
const link = (target: string) => (abs: string) => {
  symlinkSync(target, abs);
  return true;
};
const linkInside = (name: string) => (abs: string, inDir: string) => link(join(inDir, name))(abs);

/** Entries under `dir` that are neither regular files nor folders (links are not followed). */
function specialEntries(dir: string, base = ''): string[] {
  const out: string[] = [];
  for (const e of readdirSync(join(dir, base), { withFileTypes: true })) {
    const rel = base ? `${base}/${e.name}` : e.name;
    if (e.isDirectory()) out.push(...specialEntries(dir, rel));
    else if (!e.isFile()) out.push(rel);
  }
  return out.sort();
}
const SPECIAL: SpecialCase[] = [
  {
    kind: 'FIFO',
    path: 'pipe',
    make: fifo,
    note: /^pipe is a FIFO \(named pipe\), not a regular file; it was not opened$/,
  },
  { kind: 'FIFO with a scan name', path: 'scan-0001.png', make: fifo, note: /is a FIFO/ },
  {
    kind: 'FIFO in a subfolder',
    path: 'box/deep/pipe.tif',
    make: fifo,
    note: /^box\/deep\/pipe\.tif is a FIFO/,
  },
  {
    kind: 'symbolic link to /dev/zero',
    path: 'zero.png',
    make: link('/dev/zero'),
    note: /^zero\.png is a symbolic link to \/dev\/zero, a character device, not a regular file; it was not opened$/,
  },
  {
    kind: 'symbolic link to /dev/null',
    path: 'null.tif',
    make: link('/dev/null'),
    note: /a character device/,
  },
  {
    kind: 'symbolic link to /dev/urandom',
    path: 'random.png',
    make: link('/dev/urandom'),
    note: /a character device/,
  },
  {
    kind: 'symbolic link to a FIFO',
    path: 'to-pipe.png',
    make: linkInside('pipe'),
    note: /is a symbolic link to .*pipe, a FIFO \(named pipe\)/,
  },
  {
    kind: 'chain of links to a FIFO',
    path: 'chain.png',
    make: linkInside('to-pipe.png'),
    note: /a FIFO \(named pipe\)/,
  },
  {
    kind: 'socket',
    path: 'scanner.sock',
    make: (a) =>
      new Promise<boolean>((resolve) => {
        const s = createNetServer();
        sockets.push(s);
        s.on('error', () => resolve(false));
        s.listen(a, () => resolve(true));
      }),
    note: /^scanner\.sock is a socket, not a regular file/,
  },
  {
    kind: 'symbolic link to a socket',
    path: 'to-socket.png',
    make: linkInside('scanner.sock'),
    note: /, a socket, not a regular file/,
  },
  {
    kind: 'character device node',
    path: 'chardev',
    make: (a) => isRoot && spawnSync('mknod', [a, 'c', '1', '3']).status === 0,
    note: /^chardev is a character device, not a regular file/,
  },
  {
    kind: 'block device node',
    path: 'blockdev',
    make: (a) => isRoot && spawnSync('mknod', [a, 'b', '7', '200']).status === 0,
    note: /^blockdev is a block device, not a regular file/,
  },
  {
    kind: 'broken link',
    path: 'gone.png',
    make: link('missing-original.png'),
    note: /^gone\.png is a broken symbolic link: its target missing-original\.png does not exist$/,
  },
  {
    kind: 'link through a file',
    path: 'through-file.png',
    make: link('good.png/x'),
    note: /is a broken symbolic link/,
  },
  {
    kind: 'link to itself',
    path: 'self.png',
    make: link('self.png'),
    note: /^self\.png is a symbolic link that loops \(it points to self\.png\) and never reaches a file$/,
  },
  {
    kind: 'two links that loop',
    path: 'loop-a.png',
    make: (a, inDir) => link('loop-b.png')(a) && link('loop-a.png')(join(inDir, 'loop-b.png')),
    note: /loops/,
  },
  {
    kind: 'link to a folder',
    path: 'box-link',
    make: link('box'),
    note: /^box-link is a symbolic link to the folder box; batch does not follow links to folders$/,
  },
];
const sockets: NetServer[] = [];

describe.skipIf(!built)(
  'batch lists every special file as skipped, with the reason, and never opens it',
  () => {
    let inDir: string;
    let outDir: string;
    let made: Set<string>;
    let result: ReturnType<typeof runBatchCli>;
    let rows: Map<string, BatchRow>;
    let events: Map<string, Record<string, unknown>>;
    let before: Record<string, string>;

    beforeAll(async () => {
      const root = await mkdtemp(join(tmpdir(), 'rankfold-hostile-batch-'));
      inDir = join(root, 'in');
      outDir = join(root, 'out');
      mkdirSync(join(inDir, 'box', 'deep'), { recursive: true });
      await writePage(join(inDir, 'good.png'), 64, 48, 3);
      writeFileSync(
        join(inDir, 'box', 'sheet.txt'),
        'not an image, but a regular file: it is opened, found not to be a scan, and skipped (issue #14)\n',
      );
      made = new Set();
      for (const c of SPECIAL) if (await c.make(join(inDir, c.path), inDir)) made.add(c.path);
      // A FIFO opened by mistake would block for ever: the run is killed after 30 s, and the test then fails.
      before = hashTree(inDir);
      result = runBatchCli([inDir, '-o', outDir, ...BUDGET, '--jobs', '2', '--json'], 30_000);
      events = new Map(
        jsonLines(result.stdout)
          .filter((e) => e.event === 'file')
          .map((e) => [e.path as string, e]),
      );
      rows = new Map(manifestRows(join(outDir, 'rankfold-manifest.jsonl')).map((r) => [r.path, r]));
      return async () => {
        for (const s of sockets) s.close();
        await rm(root, { recursive: true, force: true });
      };
    }, 60_000);

    it('the run ends by itself; skipped files, the text file among them, are not failures (exit 0)', () => {
      expect(result.signal).toBeNull();
      expect(result.code, result.stderr).toBe(0);
      const end = jsonLines(result.stdout).at(-1)!;
      const special = specialEntries(inDir);
      expect(special.length).toBeGreaterThanOrEqual(made.size);
      expect(end.summary).toMatchObject({
        ok: 1,
        failed: 0,
        skipped: special.length + 1,
        total: special.length + 2,
      });
      // Every entry that is not a regular file or folder has a skipped row: nothing is left out.
      expect(
        [...rows.values()]
          .filter((r) => r.status === 'skipped')
          .map((r) => r.path)
          .sort(),
      ).toEqual([...special, 'box/sheet.txt'].sort());
      expect(rows.get('box/sheet.txt')!.note).toMatch(/is not an image Rankfold can read/);
      expect(hashTree(inDir)).toEqual(before);
    });

    it.each(SPECIAL.map((c) => [c.kind, c] as const))('%s', (_kind, c) => {
      if (!made.has(c.path)) return; // could not be made here (device nodes need root)
      const row = rows.get(c.path);
      expect(row, `no manifest row for ${c.path}`).toBeDefined();
      expect(row!.status).toBe('skipped');
      expect(row!.note).toMatch(c.note);
      expect(row!.output).toBe('');
      expect(events.get(c.path)?.status).toBe('skipped');
      const csv = readFileSync(join(outDir, 'rankfold-manifest.csv'), 'utf8');
      expect(csv.split('\r\n').some((l) => l.startsWith(`${c.path},,skipped,`))).toBe(true);
      const html = readFileSync(join(outDir, 'rankfold-manifest.html'), 'utf8');
      expect(html).toContain(`<li><code>${c.path}</code> — `);
    });

    it('the human summary lists each skipped entry with its reason', () => {
      const r = runBatchCli([inDir, '-o', join(outDir, '..', 'out-dry'), ...BUDGET, '--dry-run'], 30_000);
      expect(r.code).toBe(0);
      expect(r.stderr).toContain(`${specialEntries(inDir).length} skipped (not regular files)`);
      expect(r.stderr).toContain('Skipped (not regular files, never opened):');
      for (const p of made) expect(r.stderr).toContain(`\n  ${p} `);
    });
  },
);
