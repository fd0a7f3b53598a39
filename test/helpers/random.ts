/**
 * Seeded generators for test problems. Deliberately a different generator from the engine's
 * fold shuffler (engine/random.ts), so test data never share a stream with fold assignment.
 * Generator: xorshift128 (Marsaglia 2003, "Xorshift RNGs", J. Stat. Software 8(14)), state seeded
 * by a splitmix-style integer hash so that nearby seeds give unrelated streams.
 */
export class TestRandom {
  private a: number;
  private b: number;
  private c: number;
  private d: number;
  private spare: number | null = null;

  constructor(seed: number) {
    let s = seed >>> 0;
    const mix = (): number => {
      s = (s + 0x9e3779b9) >>> 0;
      let z = s;
      z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
      z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
      return (z ^ (z >>> 16)) >>> 0;
    };
    this.a = mix();
    this.b = mix();
    this.c = mix();
    this.d = mix() | 1; // never an all-zero state
  }

  /** Uniform on [0, 1). */
  uniform(): number {
    const t = (this.a ^ (this.a << 11)) >>> 0;
    this.a = this.b;
    this.b = this.c;
    this.c = this.d;
    this.d = (this.d ^ (this.d >>> 19) ^ (t ^ (t >>> 8))) >>> 0;
    return this.d / 4294967296;
  }

  /** Standard normal by the Box–Muller transform (Box & Muller 1958, Ann. Math. Stat. 29(2)). */
  normal(): number {
    if (this.spare !== null) {
      const v = this.spare;
      this.spare = null;
      return v;
    }
    let u = this.uniform();
    while (u === 0) u = this.uniform();
    const v = this.uniform();
    const radius = Math.sqrt(-2 * Math.log(u));
    this.spare = radius * Math.sin(2 * Math.PI * v);
    return radius * Math.cos(2 * Math.PI * v);
  }

  /** Integer in [0, count). */
  integer(count: number): number {
    return Math.floor(this.uniform() * count);
  }

  /** A random permutation of 0..count-1 (Fisher–Yates). */
  permutation(count: number): number[] {
    const out = Array.from({ length: count }, (_, i) => i);
    for (let i = count - 1; i > 0; i--) {
      const k = this.integer(i + 1);
      [out[i], out[k]] = [out[k], out[i]];
    }
    return out;
  }
}
