import { describe, expect, it } from "vitest";
import { broadcast } from "../../../jobs/broadcast";

async function* numbers(n: number, log?: number[]) {
  for (let i = 0; i < n; i++) {
    log?.push(i);
    yield i;
  }
}

async function collect<T>(it: AsyncIterable<T>, delayEvery = 0): Promise<T[]> {
  const out: T[] = [];
  for await (const x of it) {
    out.push(x);
    if (delayEvery && out.length % delayEvery === 0) await new Promise((r) => setTimeout(r, 1));
  }
  return out;
}

describe("broadcast: one stream, several writers", () => {
  it("gives every consumer every item in order", async () => {
    const [a, b, c] = broadcast(numbers(500), 3, 8);
    const [ra, rb, rc] = await Promise.all([collect(a!), collect(b!, 10), collect(c!, 3)]);
    const expected = Array.from({ length: 500 }, (_, i) => i);
    expect(ra).toEqual(expected);
    expect(rb).toEqual(expected);
    expect(rc).toEqual(expected);
  });

  it("never lets the producer run more than the high-water mark ahead of the slowest consumer", async () => {
    const produced: number[] = [];
    const [fast, slow] = broadcast(numbers(100, produced), 2, 5);
    const fastDone = collect(fast!);
    const slowIt = slow![Symbol.asyncIterator]();
    await slowIt.next();
    await new Promise((r) => setTimeout(r, 20));
    // One item taken by the slow consumer, at most five waiting for it, one in flight.
    expect(produced.length).toBeLessThanOrEqual(1 + 5 + 1);
    await slowIt.return!();
    expect(await fastDone).toHaveLength(100);
  });

  it("passes a source error to every consumer", async () => {
    async function* broken() {
      yield 1;
      throw new Error("disk gone");
    }
    const [a, b] = broadcast(broken(), 2);
    await expect(collect(a!)).rejects.toThrow("disk gone");
    await expect(collect(b!)).rejects.toThrow("disk gone");
  });
});
