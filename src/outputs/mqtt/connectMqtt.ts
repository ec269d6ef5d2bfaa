import { connect, Store, type IClientOptions, type IConnackPacket, type MqttClient } from 'mqtt';
import { createRetryScheduler, type BackoffOptions } from '../../frames/live/backoff.ts';
import { readMqttTls, type MqttQos, type MqttSettings } from './mqttSettings.ts';
import type { Log } from '../../domain/log.ts';

/** A message the broker publishes for us when the connection drops without a DISCONNECT. */
export interface MqttWill {
  readonly topic: string;
  readonly payload: string;
  readonly qos: MqttQos;
  readonly retain: boolean;
}

export interface ConnectMqttOptions {
  /** MQTT client identifier (required: the caller knows which default fits). */
  readonly clientId: string;
  /** Clean session (MQTT 3.1.1 §3.1.2.4): true forgets subscriptions and queued messages on disconnect; default true. */
  readonly clean?: boolean;
  /**
   * With `clean: false`: connect with MQTT 5 and ask the broker to keep the session (subscriptions,
   * queued QoS ≥ 1 messages) this many seconds after the connection ends (Session Expiry
   * Interval, MQTT 5.0 §3.1.2.11.2; clean start off). Default: MQTT 3.1.1, where a persistent
   * session is kept until the broker's own limit (Mosquitto: persistent_client_expiration).
   */
  readonly sessionExpirySeconds?: number;
  readonly will?: MqttWill;
  /** Reconnection delays; default 1 s doubling to 60 s with full jitter (see backoff.ts). */
  readonly backoff?: BackoffOptions;
  /** Seconds without CONNACK before an attempt counts as failed; default 30. */
  readonly connectTimeoutSeconds?: number;
  /** Called on every successful connection (first and after each reconnect). */
  readonly onConnect?: (connack: IConnackPacket) => void;
  /** Called when a connection ends or an attempt fails. */
  readonly onClose?: () => void;
  /** Log lines (never credentials). Default: none. */
  readonly log?: Log;
}

/** A client that keeps itself connected. */
export interface MqttConnection {
  readonly client: MqttClient;
  readonly connected: boolean;
  /** Failed attempts since the last successful connection. */
  readonly attempt: number;
  /**
   * Ends the connection (sending DISCONNECT when connected, so no will is published) and stops
   * reconnecting; after `timeoutMs` (default 5000) without the broker's answers it just closes.
   */
  stop(timeoutMs?: number): Promise<void>;
}

/**
 * Connects to the broker of `settings` and reconnects with exponential backoff and full jitter
 * (Brooker 2015, as the camera sources do) whenever the connection drops. mqtt.js's own fixed
 * `reconnectPeriod` is switched off; its message stores are kept across reconnections, so QoS 1
 * and 2 messages that were in flight are sent again after a reconnect (MQTT 3.1.1 §4.4, message
 * delivery retry). Credentials go only into the CONNECT packet, never into a log line.
 */
export function connectMqtt(settings: MqttSettings, options: ConnectMqttOptions): MqttConnection {
  const { clientId, clean = true, sessionExpirySeconds, will, backoff = {}, connectTimeoutSeconds = 30, onConnect, onClose, log = () => {} } = options;
  const tls = readMqttTls(settings);
  const host = new URL(settings.url).host;
  const incomingStore = new Store();
  const outgoingStore = new Store();
  const retry = createRetryScheduler(backoff);
  const clientOptions: IClientOptions = {
    clientId,
    clean,
    ...(sessionExpirySeconds !== undefined && !clean ? { protocolVersion: 5, properties: { sessionExpiryInterval: sessionExpirySeconds } } : { protocolVersion: 4 }),
    reconnectPeriod: 0,
    connectTimeout: connectTimeoutSeconds * 1000,
    incomingStore,
    outgoingStore,
    ...(settings.username !== undefined && { username: settings.username }),
    ...(settings.password !== undefined && { password: settings.password }),
    ...(will && { will: { topic: will.topic, payload: Buffer.from(will.payload, 'utf8'), qos: will.qos, retain: will.retain } }),
    ...(tls && tls),
  };
  let stopping = false;
  let wasConnected = false;
  let lastError = '';
  const client = connect(settings.url, clientOptions);

  client.on('connect', (connack) => {
    if (!wasConnected || retry.attempt > 0) log(`mqtt: connected to ${host}`);
    retry.reset();
    retry.cancel();
    wasConnected = true;
    lastError = '';
    onConnect?.(connack);
  });
  client.on('error', (error) => {
    // One line per distinct error, not one per attempt.
    if (error.message !== lastError) log(`mqtt: ${host}: ${error.message}`, 'warn');
    lastError = error.message;
  });
  client.on('close', () => {
    if (stopping) return;
    if (wasConnected && retry.attempt === 0) log(`mqtt: connection to ${host} lost; reconnecting`, 'warn');
    onClose?.();
    if (retry.pending) return;
    const { attempt, retryInMs } = retry.schedule(() => {
      if (!stopping) client.reconnect({ incomingStore, outgoingStore });
    });
    if ((attempt & (attempt - 1)) === 0) log(`mqtt: ${host}: retry ${attempt} in ${(retryInMs / 1000).toFixed(1)} s`, 'debug');
  });

  return {
    client,
    get connected() {
      return client.connected;
    },
    get attempt() {
      return retry.attempt;
    },
    async stop(timeoutMs = 5000) {
      stopping = true;
      retry.cancel();
      if (!client.connected) {
        await new Promise<void>((done) => client.end(true, {}, () => done()));
        return;
      }
      // A clean end waits for the messages in flight; a broker that stopped answering must not hang the stop.
      await new Promise<void>((done) => {
        const timer = setTimeout(() => {
          client.stream?.destroy();
          done();
        }, timeoutMs);
        client.end(false, {}, () => {
          clearTimeout(timer);
          done();
        });
      });
    },
  };
}
