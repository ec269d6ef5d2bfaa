import { createServer, type IncomingHttpHeaders, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { SMTPServer } from 'smtp-server';

/** A request the local webhook receiver got. */
export interface Received {
  readonly headers: IncomingHttpHeaders;
  readonly body: string;
}

/** A local HTTP receiver of webhooks on 127.0.0.1; `answer` decides each status (default 200). */
export interface WebhookReceiver {
  readonly url: string;
  readonly received: Received[];
  answer: (index: number) => number | 'hang';
  close(): Promise<void>;
}

export async function startWebhookReceiver(): Promise<WebhookReceiver> {
  const received: Received[] = [];
  const hanging = new Set<import('node:http').ServerResponse>();
  const receiver = {
    url: '',
    received,
    answer: (_index: number): number | 'hang' => 200,
    close: async () => {},
  };
  const server: Server = createServer((req, res) => {
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => chunks.push(c));
    req.on('end', () => {
      const index = received.length;
      received.push({ headers: req.headers, body: Buffer.concat(chunks).toString('utf8') });
      const status = receiver.answer(index);
      if (status === 'hang') {
        hanging.add(res);
        return;
      }
      res.writeHead(status, { 'content-type': 'text/plain' }).end(status < 300 ? 'ok' : 'no');
    });
  });
  await new Promise<void>((done) => server.listen(0, '127.0.0.1', done));
  receiver.url = `http://127.0.0.1:${(server.address() as AddressInfo).port}/hook`;
  receiver.close = async () => {
    for (const res of hanging) res.destroy();
    server.closeAllConnections();
    await new Promise<void>((done) => server.close(() => done()));
  };
  return receiver;
}

/** A mail the local SMTP server accepted. */
export interface ReceivedMail {
  readonly from: string | undefined;
  readonly to: string[];
  readonly user: string | undefined;
  readonly raw: string;
  /** The Subject header, unfolded and decoded when it is RFC 2047 encoded words. */
  readonly subject: string;
}

/**
 * A local SMTP server (the `smtp-server` package) on 127.0.0.1 that keeps every message. With
 * `login`, AUTH is required and only that user name and password pass; STARTTLS is offered with
 * the package's own self-signed certificate.
 */
export async function startSmtpServer(options: { login?: { user: string; pass: string } } = {}): Promise<{ port: number; mails: ReceivedMail[]; close(): Promise<void> }> {
  const mails: ReceivedMail[] = [];
  const { login } = options;
  const server = new SMTPServer({
    logger: false,
    authOptional: login === undefined,
    ...(login === undefined && { disabledCommands: ['AUTH'] }),
    onAuth(auth, _session, callback) {
      if (login && auth.username === login.user && auth.password === login.pass) callback(null, { user: auth.username });
      else callback(new Error('Invalid username or password'));
    },
    onData(stream, session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (c: Buffer) => chunks.push(c));
      stream.on('end', () => {
        const raw = Buffer.concat(chunks).toString('utf8');
        mails.push({
          from: session.envelope.mailFrom ? session.envelope.mailFrom.address : undefined,
          to: session.envelope.rcptTo.map((r) => r.address),
          user: typeof session.user === 'string' ? session.user : undefined,
          raw,
          subject: subjectOf(raw),
        });
        callback();
      });
    },
  });
  await new Promise<void>((done) => server.listen(0, '127.0.0.1', () => done()));
  const port = ((server as unknown as { server: Server }).server.address() as AddressInfo).port;
  return { port, mails, close: () => new Promise<void>((done) => server.close(() => done())) };
}

/** The Subject header: folded lines joined (RFC 5322 §2.2.3), encoded words decoded (RFC 2047: B and Q). */
function subjectOf(raw: string): string {
  const head = raw.split(/\r?\n\r?\n/)[0].replace(/\r?\n[ \t]+/g, ' ');
  const line = /^Subject: (.*)$/im.exec(head)?.[1] ?? '';
  return line
    .replace(/\?=\s+=\?/g, '?==?')
    .replace(/=\?([^?]+)\?([BbQq])\?([^?]*)\?=/g, (_m, _charset: string, enc: string, text: string) =>
      enc.toUpperCase() === 'B'
        ? Buffer.from(text, 'base64').toString('utf8')
        : Buffer.from(text.replace(/_/g, ' ').replace(/=([0-9A-Fa-f]{2})/g, (_x, h: string) => String.fromCharCode(parseInt(h, 16))), 'latin1').toString('utf8'),
    );
}
