import { Resolver } from 'node:dns/promises';
import { afterEach, describe, expect, it } from 'vitest';
import { CANNOT_RESOLVE, httpGet, isResolveFailure, requestFailure } from '../../../src/frames/live/httpGet.ts';
import { startDnsServer, startServer, type TestDnsServer, type TestServer } from './liveFixtures.ts';

let server: TestServer | undefined;
let dns: TestDnsServer | undefined;
afterEach(async () => {
  await server?.close();
  server = undefined;
  await dns?.close();
  dns = undefined;
});

/** The error a promise rejects with. */
async function rejection(promise: Promise<unknown>): Promise<unknown> {
  try {
    await promise;
  } catch (error) {
    return error;
  }
  throw new Error('expected a rejection');
}

describe('httpGet', () => {
  it('resolves the host name with the lookup given, and only with it', async () => {
    server = await startServer((request, response) => response.end(`host ${request.headers.host}`));
    dns = await startDnsServer(() => '127.0.0.1');
    const port = new URL(server.url).port;
    const response = await httpGet(`http://camera.test:${port}/snap.jpg`, { lookup: dns.lookup });
    let body = '';
    for await (const chunk of response) body += chunk;
    expect(response.statusCode).toBe(200);
    expect(body).toBe(`host camera.test:${port}`);
    expect(dns.queries).toEqual(['camera.test']);
  });

  it('says "cannot resolve host" for a name the DNS does not know, and not for a refused connection', async () => {
    // check: Node's own errors — dns.Resolver's answer to NXDOMAIN (code ENOTFOUND, syscall queryA)
    // from a loopback DNS server, and a connection to a closed loopback port (ECONNREFUSED).
    dns = await startDnsServer(() => undefined);
    const unknown = await rejection(httpGet('http://camera.test/snap.jpg', { lookup: dns.lookup }));
    expect(isResolveFailure(unknown)).toBe(true);
    expect(requestFailure(unknown)).toBe(`${CANNOT_RESOLVE} camera.test (ENOTFOUND)`);

    const resolver = new Resolver({ timeout: 2000, tries: 1 });
    resolver.setServers([`127.0.0.1:${dns.port}`]);
    const direct = await rejection(resolver.resolve4('other.test'));
    expect(requestFailure(direct)).toBe('cannot resolve host other.test (ENOTFOUND)');

    server = await startServer(() => {});
    const url = server.url;
    await server.close();
    server = undefined;
    const refused = await rejection(httpGet(`${url}/snap.jpg`));
    expect(isResolveFailure(refused)).toBe(false);
    expect(requestFailure(refused)).toMatch(/ECONNREFUSED/);
    expect(requestFailure(refused)).not.toMatch(/resolve/);
  });

  it('names the host given when the error does not', () => {
    // The shape of Node's dns.lookup error for EAI_AGAIN (recalled from memory), without its hostname.
    const error = Object.assign(new Error('getaddrinfo EAI_AGAIN'), { code: 'EAI_AGAIN', syscall: 'getaddrinfo' });
    expect(requestFailure(error, 'door-cam.local')).toBe('cannot resolve host door-cam.local (EAI_AGAIN)');
  });
});
