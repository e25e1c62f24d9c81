/**
 * Seeded draws for planning a scenario in JavaScript (the rows themselves are
 * drawn inside PostgreSQL, see generate.ts). sfc32 (Chris Doty-Humphrey's
 * "small fast counting" generator, from PractRand) seeded through SplitMix32
 * so that nearby seeds give unrelated streams; each purpose forks its own
 * stream by name, so adding a draw to one part of the plan does not shift
 * every draw after it.
 */

function splitmix32(state: number): () => number {
  let s = state >>> 0;
  return () => {
    s = (s + 0x9e3779b9) >>> 0;
    let z = s;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
    return (z ^ (z >>> 16)) >>> 0;
  };
}

/** 32-bit FNV-1a of a text, to turn stream names into seeds. */
function fnv1a(text: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) h = Math.imul(h ^ text.charCodeAt(i), 0x01000193) >>> 0;
  return h;
}

export class Rng {
  private a: number;
  private b: number;
  private c: number;
  private d: number;

  constructor(
    readonly seed: number,
    readonly name = 'root',
  ) {
    const mix = splitmix32((seed >>> 0) ^ fnv1a(name) ^ Math.floor(seed / 2 ** 32));
    this.a = mix();
    this.b = mix();
    this.c = mix();
    this.d = mix();
    for (let i = 0; i < 12; i++) this.next();
  }

  /** An independent stream for one purpose. */
  fork(name: string): Rng {
    return new Rng(this.seed, `${this.name}/${name}`);
  }

  /** Uniform in [0, 1). */
  next(): number {
    const t = (((this.a + this.b) >>> 0) + this.d) >>> 0;
    this.d = (this.d + 1) >>> 0;
    this.a = this.b ^ (this.b >>> 9);
    this.b = (this.c + (this.c << 3)) >>> 0;
    this.c = ((this.c << 21) | (this.c >>> 11)) >>> 0;
    this.c = (this.c + t) >>> 0;
    return t / 2 ** 32;
  }

  uniform(lo: number, hi: number): number {
    return lo + (hi - lo) * this.next();
  }

  /** Integer in [lo, hi], both included. */
  int(lo: number, hi: number): number {
    return lo + Math.floor(this.next() * (hi - lo + 1));
  }

  chance(p: number): boolean {
    return this.next() < p;
  }

  pick<T>(items: readonly T[]): T {
    if (items.length === 0) throw new Error('pick from an empty list');
    return items[Math.floor(this.next() * items.length)]!;
  }

  /** Distinct items in random order, at most `n`. */
  sample<T>(items: readonly T[], n: number): T[] {
    return this.shuffle(items).slice(0, n);
  }

  shuffle<T>(items: readonly T[]): T[] {
    const out = [...items];
    for (let i = out.length - 1; i > 0; i--) {
      const j = Math.floor(this.next() * (i + 1));
      [out[i], out[j]] = [out[j]!, out[i]!];
    }
    return out;
  }

  /** Standard normal (Box-Muller). */
  normal(): number {
    const u1 = 1 - this.next();
    const u2 = this.next();
    return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
  }

  /** Weights that add up to 1, decreasing like a Zipf law with exponent `s`, in random order. */
  zipfShares(n: number, s: number): number[] {
    const raw = Array.from({ length: n }, (_, i) => 1 / (i + 1) ** s);
    const total = raw.reduce((a, b) => a + b, 0);
    return raw.map((w) => w / total);
  }
}
