/**
 * Live camera sources for the long-running counting service: a drop folder, a polled snapshot
 * URL, an MJPEG stream, anything ffmpeg reads, and the synthetic scene. Each delivers grey frames
 * at the working size through the {@link CameraSource} handlers and never writes a frame anywhere.
 */
export { SourceState, SOURCE_SIZE_CHANGED, WRONG_ASPECT, type CameraHandlers, type CameraSource, type StatusDetail } from './cameraSource.ts';
export { backoffDelay, createRetryScheduler, type BackoffOptions, type RetryScheduler, type RetrySchedulerOptions } from './backoff.ts';
export { systemClock, type Clock } from './clock.ts';
export { dropFolder, AfterRead, type DropFolderOptions } from './dropFolder.ts';
export { snapshotPoller, type SnapshotPollerOptions } from './snapshotPoller.ts';
export { mjpegStream, type MjpegStreamOptions } from './mjpegStream.ts';
export { multipartBoundary, parseMultipart, type MultipartEvent, type MultipartParser, type ParseMultipartOptions } from './parseMultipart.ts';
export { ffmpegStream, ffmpegInputKind, FfmpegInputKind, showinfoSize, type FfmpegStreamOptions } from './ffmpegStream.ts';
export { CANNOT_RESOLVE } from './httpGet.ts';
export { jpegFrameSize } from './jpegFrameSize.ts';
export { sourceSizeChange, type SourceSizeChange } from './sourceSizeChange.ts';
export { syntheticCamera, type SimulatedOutage, type SyntheticCamera, type SyntheticCameraOptions } from './syntheticCamera.ts';
export {
  createCameraSource,
  CameraSourceKind,
  type CameraSourceCommon,
  type CameraSourceDescription,
  type CreateCameraSourceOptions,
  type DropFolderSourceDescription,
  type FfmpegSourceDescription,
  type MjpegSourceDescription,
  type SnapshotSourceDescription,
  type SyntheticSourceDescription,
} from './createCameraSource.ts';
