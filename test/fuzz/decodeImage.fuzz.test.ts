import { describe, expect, it } from 'vitest';
import { fuzzDecode } from './fuzzDecode.ts';

describe('hostile images', () => {
  it('gives every one of 5000 damaged images a clear answer, without crashing or growing memory', async () => {
    const result = await fuzzDecode(5000, 2026);
    console.log(`fuzz: ${result.tried} damaged images, ${result.decoded} decoded, ${result.refused} refused with a named error, ` +
      `${result.unexpected.length} unexpected; resident memory grew ${result.rssGrowthMb.toFixed(0)} MB; by kind ${JSON.stringify(result.byKind)}`);
    expect(result.tried).toBe(5000);
    expect(result.unexpected).toEqual([]);
    // Every decompression bomb is refused.
    expect(result.byKind.hugeDimensions.refused).toBe(result.byKind.hugeDimensions.tried);
    expect(result.rssGrowthMb).toBeLessThan(300);
  });
});
