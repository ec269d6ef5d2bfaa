import { parseArgs, type ParseArgsConfig } from 'node:util';

/** A mistake in how a command was called: printed with the command's usage, exit code 2. */
export class UsageError extends Error {
  override name = 'UsageError';
}

type Options = NonNullable<ParseArgsConfig['options']>;

/** Parses `--name value` options strictly; unknown options and stray arguments are UsageErrors. */
export function parseOptions<T extends Options>(argv: string[], options: T) {
  try {
    return parseArgs({ args: argv, options, strict: true, allowPositionals: false }).values;
  } catch (error) {
    throw new UsageError((error as Error).message.replace(/\. To specify a positional.*$/s, ''));
  }
}

/** Reads an optional numeric option; `integer` asks for a whole number. Bounds are inclusive. */
export function numberOption(
  value: string | undefined,
  name: string,
  { min = -Infinity, max = Infinity, integer = false }: { min?: number; max?: number; integer?: boolean } = {},
): number | undefined {
  if (value === undefined) return undefined;
  const n = Number(value);
  if (value.trim() === '' || !Number.isFinite(n) || (integer && !Number.isInteger(n)) || n < min || n > max) {
    const range = `${min === -Infinity ? '' : `≥ ${min}`}${min !== -Infinity && max !== Infinity ? ' and ' : ''}${max === Infinity ? '' : `≤ ${max}`}`;
    throw new UsageError(`--${name} must be ${integer ? 'a whole number' : 'a number'}${range ? ' ' + range : ''}, got "${value}"`);
  }
  return n;
}

/** Reads a required string option. */
export function requireOption(value: string | undefined, name: string, what: string): string {
  if (value === undefined || value === '') throw new UsageError(`--${name} is required: ${what}`);
  return value;
}
