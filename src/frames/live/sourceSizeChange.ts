/**
 * Telling a live source's change of image size (a camera switched from 640×480 to 1280×960) to
 * the status handler: see the module comment of cameraSource.ts.
 */
import type { Size } from '../workingSize.ts';
import { SOURCE_SIZE_CHANGED, type StatusDetail } from './cameraSource.ts';

/** The detail of the `online` status that reports a change of source size. */
export type SourceSizeChange = Required<Pick<StatusDetail, 'reason' | 'sourceSize' | 'previousSourceSize'>>;

/**
 * The `online` status detail for a source whose images were `previous` and now are `next`
 * (width × height in pixels), or undefined when nothing changed (same size, or no earlier image).
 * Pure.
 *
 * Example: sourceSizeChange({ width: 640, height: 480 }, { width: 1280, height: 960 }) →
 * { reason: 'source size changed: 640×480 → 1280×960', sourceSize: { width: 1280, height: 960 },
 * previousSourceSize: { width: 640, height: 480 } }.
 */
export function sourceSizeChange(previous: Size | undefined, next: Size): SourceSizeChange | undefined {
  if (previous === undefined || (previous.width === next.width && previous.height === next.height)) return undefined;
  return {
    reason: `${SOURCE_SIZE_CHANGED}: ${previous.width}×${previous.height} → ${next.width}×${next.height}`,
    sourceSize: { width: next.width, height: next.height },
    previousSourceSize: { width: previous.width, height: previous.height },
  };
}
