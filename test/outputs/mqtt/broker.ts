import { once } from 'node:events';
import { createServer, type Socket } from 'node:net';
import { Aedes, type AedesOptions, type Client } from 'aedes';
import { connect, type MqttClient } from 'mqtt';

/**
 * An in-process MQTT broker (aedes, an independent MQTT 3.1.1 implementation) on 127.0.0.1 and a
 * port the OS picks. `down()` cuts every connection and refuses new ones until `up()`: the broker
 * keeps its sessions and retained messages, as a real broker does across a network outage.
 */
export interface TestBroker {
  readonly url: string;
  readonly port: number;
  readonly aedes: Aedes;
  down(): void;
  up(): void;
  /** Drops one client's connection without a DISCONNECT (the broker then publishes its will). */
  cut(clientId: string): void;
  close(): Promise<void>;
}

export async function startBroker(options: AedesOptions = {}): Promise<TestBroker> {
  const aedes = await Aedes.createBroker(options);
  const sockets = new Set<Socket>();
  const clients = new Map<string, Client>();
  aedes.on('client', (client) => clients.set(client.id, client));
  let refusing = false;
  const server = createServer((socket) => {
    if (refusing) {
      socket.destroy();
      return;
    }
    sockets.add(socket);
    socket.on('close', () => sockets.delete(socket));
    aedes.handle(socket);
  });
  server.listen(0, '127.0.0.1');
  await once(server, 'listening');
  const address = server.address();
  if (typeof address !== 'object' || address === null) throw new Error('broker: no address');
  return {
    url: `mqtt://127.0.0.1:${address.port}`,
    port: address.port,
    aedes,
    down() {
      refusing = true;
      for (const s of sockets) s.destroy();
    },
    up() {
      refusing = false;
    },
    cut(clientId) {
      const client = clients.get(clientId);
      if (!client) throw new Error(`broker: no client ${clientId}`);
      client.conn.destroy();
    },
    async close() {
      for (const s of sockets) s.destroy();
      await new Promise<void>((done) => server.close(() => done()));
      await new Promise<void>((done) => aedes.close(() => done()));
    },
  };
}

/** A plain MQTT client that records what it receives on `filter`. */
export interface Observer {
  readonly client: MqttClient;
  readonly messages: { topic: string; payload: string; retain: boolean }[];
  /** The parsed JSON bodies of the messages on `topic` (empty payloads as null). */
  bodies(topic: string): unknown[];
  close(): Promise<void>;
}

export async function observe(url: string, filter: string): Promise<Observer> {
  const client = connect(url, { reconnectPeriod: 0, clientId: `observer-${Math.random().toString(16).slice(2, 10)}` });
  const messages: Observer['messages'] = [];
  client.on('message', (topic, payload, packet) => messages.push({ topic, payload: payload.toString('utf8'), retain: packet.retain }));
  await new Promise<void>((done, fail) => {
    client.once('connect', () => done());
    client.once('error', fail);
  });
  await client.subscribeAsync(filter, { qos: 1 });
  return {
    client,
    messages,
    bodies: (topic) => messages.filter((m) => m.topic === topic).map((m) => (m.payload === '' ? null : JSON.parse(m.payload))),
    close: () => client.endAsync(),
  };
}
