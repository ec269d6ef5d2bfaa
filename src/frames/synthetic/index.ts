/**
 * Synthetic scenes for the demo and the tests: a library reading room (people), a stock room
 * (boxes on shelves) and a sunny town square seen with strong perspective (passers-by and their
 * shadows, never empty), deterministic from a seed, with exact truth per zone.
 */
import { createPlaza, type PlazaOptions, type PlazaScene } from './plaza.ts';
import { createReadingRoom, type ReadingRoomOptions, type ReadingRoomScene } from './readingRoom.ts';
import { createStockRoom, type StockRoomOptions, type StockRoomScene } from './stockRoom.ts';

export { createReadingRoom, type ReadingRoomOptions, type ReadingRoomScene } from './readingRoom.ts';
export { createStockRoom, type StockRoomOptions, type StockRoomScene } from './stockRoom.ts';
export { createPlaza, type PlazaOptions, type PlazaScene } from './plaza.ts';
export { syntheticFrames, type SyntheticFramesOptions } from './syntheticFrames.ts';
export { random, type Random } from './random.ts';
export {
  Posture,
  SceneObjectKind,
  type SceneLamp,
  type SceneObject,
  type SceneTruth,
  type SyntheticScene,
  type ZoneTruth,
} from './scene.ts';

/** Ids accepted by {@link createScene}. */
export const sceneIds = ['reading-room', 'stock-room', 'plaza'] as const;
export type SceneId = (typeof sceneIds)[number];

/** Options per scene id. */
export interface SceneOptionsById {
  'reading-room': ReadingRoomOptions;
  'stock-room': StockRoomOptions;
  plaza: PlazaOptions;
}

/**
 * The synthetic scene with the given id. Throws a RangeError naming the known ids for any other.
 *
 * Example: createScene('stock-room', { seed: 2, sections: 4 }).zones.map((z) => z.id)
 * → ['shelf-top', 'shelf-upper', 'shelf-lower', 'shelf-bottom'].
 */
export function createScene(id: 'reading-room', options?: ReadingRoomOptions): ReadingRoomScene;
export function createScene(id: 'stock-room', options?: StockRoomOptions): StockRoomScene;
export function createScene(id: 'plaza', options?: PlazaOptions): PlazaScene;
export function createScene(
  id: SceneId,
  options?: ReadingRoomOptions | StockRoomOptions | PlazaOptions,
): ReadingRoomScene | StockRoomScene | PlazaScene;
export function createScene(
  id: SceneId,
  options: ReadingRoomOptions | StockRoomOptions | PlazaOptions = {},
): ReadingRoomScene | StockRoomScene | PlazaScene {
  switch (id) {
    case 'reading-room':
      return createReadingRoom(options as ReadingRoomOptions);
    case 'stock-room':
      return createStockRoom(options as StockRoomOptions);
    case 'plaza':
      return createPlaza(options as PlazaOptions);
    default:
      throw new RangeError(`scene id must be one of ${sceneIds.join(', ')}, got ${JSON.stringify(id)}`);
  }
}
