/**
 * Hands every item of one async source to `count` consumers, each at its own pace, with at most
 * `highWaterMark` items waiting for the slowest one: the producer pauses until it catches up.
 * A consumer that stops early (return/throw) is dropped; an error in the source reaches all.
 */
export function broadcast<T>(source: AsyncIterable<T>, count: number, highWaterMark = 64): AsyncIterable<T>[] {
  const queues: T[][] = Array.from({ length: count }, () => []);
  const active = new Array<boolean>(count).fill(true);
  const wakeConsumer: (() => void)[] = new Array(count).fill(() => {});
  let wakeProducer: () => void = () => {};
  let finished = false;
  let failure: { error: unknown } | undefined;
  let started = false;

  const slowest = () => Math.max(0, ...queues.filter((_, i) => active[i]).map((q) => q.length));

  async function pump() {
    try {
      for await (const item of source) {
        if (!active.some(Boolean)) break;
        queues.forEach((q, i) => active[i] && q.push(item));
        wakeConsumer.forEach((w) => w());
        while (slowest() >= highWaterMark) await new Promise<void>((r) => (wakeProducer = r));
      }
    } catch (error) {
      failure = { error };
    } finally {
      finished = true;
      wakeConsumer.forEach((w) => w());
    }
  }

  return queues.map((queue, i) => ({
    [Symbol.asyncIterator](): AsyncIterator<T> {
      if (!started) {
        started = true;
        void pump();
      }
      return {
        async next() {
          for (;;) {
            if (queue.length) {
              const value = queue.shift()!;
              wakeProducer();
              return { value, done: false };
            }
            if (failure) throw failure.error;
            if (finished) return { value: undefined, done: true };
            await new Promise<void>((r) => (wakeConsumer[i] = r));
          }
        },
        async return() {
          active[i] = false;
          queue.length = 0;
          wakeProducer();
          return { value: undefined, done: true };
        },
      };
    },
  }));
}
