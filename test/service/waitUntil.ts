/** Polls `condition` every `intervalMs` until it returns a value other than undefined/false; at most `timeoutMs`. */
export async function waitUntil<T>(
  condition: () => T | undefined | false | Promise<T | undefined | false>,
  options: { what: string; timeoutMs?: number; intervalMs?: number },
): Promise<T> {
  const { what, timeoutMs = 120_000, intervalMs = 200 } = options;
  const rounds = Math.ceil(timeoutMs / intervalMs);
  for (let i = 0; i <= rounds; i++) {
    const value = await condition();
    if (value !== undefined && value !== false) return value;
    await new Promise((done) => setTimeout(done, intervalMs));
  }
  throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
}
