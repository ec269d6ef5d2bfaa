/** A configuration file that does not validate; the message names the file and the field. */
export class ConfigError extends Error {
  override name = 'ConfigError';
}
