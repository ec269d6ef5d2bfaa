// `npm run fuzz [-- count [seed]]`: the long fuzz run of the image decoder (default 100 000).
import { fuzzDecode } from '../test/fuzz/fuzzDecode.ts';

const count = Number(process.argv[2] ?? 100_000);
const seed = Number(process.argv[3] ?? Date.now() % 100_000);
const result = await fuzzDecode(count, seed);
console.log(JSON.stringify({ seed, ...result, unexpected: result.unexpected.slice(0, 20), unexpectedCount: result.unexpected.length }, null, 2));
process.exitCode = result.unexpected.length === 0 ? 0 : 1;
