// A small seeded generator for the simulation: xoshiro128** (D. Blackman,
// S. Vigna, "Scrambled linear pseudorandom number generators", ACM TOMS 2021),
// seeded through SplitMix32 so any integer seed gives a well-mixed state.
// State lives in a Uint32Array: no allocation per draw.

export class SeededRandom {
  private readonly s = new Uint32Array(4);

  constructor(seed: number) {
    // SplitMix32-style seeding (Steele, Lea, Flood 2014 constants for the 32-bit variant).
    let x = seed >>> 0;
    for (let i = 0; i < 4; i++) {
      x = (x + 0x9e3779b9) >>> 0;
      let z = x;
      z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
      z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
      this.s[i] = (z ^ (z >>> 16)) >>> 0;
    }
    if ((this.s[0] | this.s[1] | this.s[2] | this.s[3]) === 0) this.s[0] = 1;
  }

  /** Next 32-bit output of xoshiro128**. */
  nextUint32(): number {
    const s = this.s;
    const result = Math.imul(rotl(Math.imul(s[1], 5) >>> 0, 7), 9) >>> 0;
    const t = (s[1] << 9) >>> 0;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 11);
    return result;
  }

  /** Uniform in [0, 1) with 53 random bits. */
  next(): number {
    const high = this.nextUint32() >>> 5;
    const low = this.nextUint32() >>> 6;
    return (high * 67108864 + low) / 9007199254740992;
  }

  /** Exponential with the given rate (per unit time): −ln(1 − U)/rate. */
  exponential(rate: number): number {
    return -Math.log(1 - this.next()) / rate;
  }

  /** Uniform integer in [0, n). */
  below(n: number): number {
    return Math.floor(this.next() * n);
  }
}

function rotl(x: number, k: number): number {
  return ((x << k) | (x >>> (32 - k))) >>> 0;
}
