/** The storage layer: SQLite via better-sqlite3. Open with {@link openStore}. */
export { openStore, type OpenStoreOptions, type Store } from './openStore.ts';
export { migrate, migrations, schemaVersion, SCHEMA_VERSION, type Migration } from './schema.ts';
export { type CameraInput, type CameraRecord, type CameraStore } from './cameras.ts';
export { normaliseZone, type ZoneHistoryEntry, type ZoneRecord, type ZoneStore } from './zones.ts';
export {
  MAX_COUNT,
  QUALITY_MASK,
  QualityFlag,
  SAMPLE_KIND_OF_ZONE,
  SampleKind,
  validateSample,
  type Sample,
  type SampleQuery,
  type SampleStore,
  type StoredSample,
} from './samples.ts';
export { type SequencedSample, type SequenceStore } from './sequence.ts';
export {
  BUCKET_MS,
  MAX_INTERVAL_MS,
  VALUE_SCALE,
  bucketPieces,
  type BucketPiece,
  type Rollup,
  type RollupQuery,
  type RollupStore,
} from './rollups.ts';
export { EventType, type EventInput, type EventQuery, type EventStore, type StoredEvent } from './events.ts';
export { type InsertModelOptions, type ModelInfo, type ModelInput, type ModelRecord, type ModelStore } from './models.ts';
export { SettingKey, type SettingStore } from './settings.ts';
export { type CalibrationPointInput, type CalibrationStore, type StoredCalibrationPoint } from './calibration.ts';
export { DEFAULT_RETENTION, type PruneResult, type RetentionPolicy, type RetentionStore } from './retention.ts';
export { ID_PATTERN } from './validate.ts';
