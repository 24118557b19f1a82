import { xoroshiro128plus } from "pure-rand/generator/xoroshiro128plus";
import type { RandomGenerator } from "pure-rand/types/RandomGenerator";

/**
 * A seeded source of randomness. Every stochastic procedure in src/stats takes one of these;
 * nothing in src/stats touches Math.random, so a result with a seed is reproducible.
 */
export interface RandomSource {
  /** Uniform on [0, 1). */
  uniform(): number;
  /** Standard normal draw. */
  normal(): number;
  /** Integer uniform on [0, n). */
  integer(n: number): number;
}

/** xoroshiro128+ (pure-rand) with 53-bit uniforms and Marsaglia's polar method for normals. */
export function createRandom(seed: number): RandomSource {
  const generator: RandomGenerator = xoroshiro128plus(seed | 0);
  let spareNormal: number | undefined;
  const nextUint32 = (): number => generator.next() >>> 0;
  const uniform = (): number => {
    // 53 random bits: 27 high + 26 low, the usual double-precision construction.
    const high = nextUint32() >>> 5;
    const low = nextUint32() >>> 6;
    return (high * 67108864 + low) / 9007199254740992;
  };
  return {
    uniform,
    normal(): number {
      if (spareNormal !== undefined) {
        const value = spareNormal;
        spareNormal = undefined;
        return value;
      }
      for (;;) {
        const u = 2 * uniform() - 1;
        const v = 2 * uniform() - 1;
        const radiusSquared = u * u + v * v;
        if (radiusSquared > 0 && radiusSquared < 1) {
          const factor = Math.sqrt((-2 * Math.log(radiusSquared)) / radiusSquared);
          spareNormal = v * factor;
          return u * factor;
        }
      }
    },
    integer(n: number): number {
      return Math.floor(uniform() * n);
    },
  };
}
