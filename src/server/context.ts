import type { CameraLive } from '../counting/cameraPipeline.ts';
import type { Store } from '../store/index.ts';
import type { Auth } from './auth.ts';
import type { DisplaySettings } from './displaySettings.ts';
import type { HeavyReadGate } from './heavyReads.ts';
import type { LiveViewResult } from './liveView.ts';
import type { ServiceControl } from './serviceControl.ts';
import type { Log } from '../domain/log.ts';

/** What the route modules share (built once by createApp). */
export interface ServerContext {
  readonly store: Store;
  /** Zone editing, background, mask preview and learning; absent when the app runs without a service. */
  readonly control?: ServiceControl;
  readonly live: () => readonly CameraLive[];
  readonly siteName: string;
  readonly timeZone: string;
  readonly startedAt: number;
  /** Days raw samples are kept (config storage.sampleRetentionDays), for the privacy notice. */
  readonly sampleRetentionDays?: number;
  readonly auth: Auth;
  /** Limits on long history and export reads without a key. */
  readonly heavyReads: HeavyReadGate;
  /** Service log lines; never given a token or pixels. */
  readonly log: Log;
  display(): DisplaySettings;
  /** The live state with statuses and levels. */
  liveView(): LiveViewResult;
}
