namespace TopicGroups.Core.Clustering;

/// <summary>
/// SplitMix64 (Steele, Lea &amp; Flood, "Fast splittable pseudorandom number generators", OOPSLA 2014):
/// a 64-bit counter advanced by the golden gamma 0x9E3779B97F4A7C15 and passed through a fixed mixer.
/// Specified here so that a seed means the same stream on every runtime (System.Random's algorithm
/// is not part of its contract).
/// </summary>
internal struct SplitMix64
{
    private const ulong GoldenGamma = 0x9E3779B97F4A7C15UL;

    private ulong _state;

    public SplitMix64(ulong state) => _state = state;

    /// <summary>
    /// The generator of stream <paramref name="streamIndex"/> (one per restart) under a seed:
    /// initial state = Mix(seed XOR Mix(GoldenGamma × (streamIndex + 1))), so neighbouring seeds
    /// and neighbouring streams start far apart.
    /// </summary>
    public static SplitMix64 ForStream(ulong seed, int streamIndex)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(streamIndex);
        ulong streamKey = Mix(unchecked(GoldenGamma * ((ulong)streamIndex + 1)));
        return new SplitMix64(Mix(seed ^ streamKey));
    }

    public ulong NextUInt64()
    {
        _state = unchecked(_state + GoldenGamma);
        return Mix(_state);
    }

    /// <summary>Uniform in [0, 1): the top 53 bits scaled by 2^-53.</summary>
    public double NextDouble() => (NextUInt64() >> 11) * (1.0 / (1UL << 53));

    /// <summary>Uniform integer in [0, bound), by multiply-high (Lemire, 2019) without the rejection step;
    /// the bias is below bound / 2^64, far under anything a clustering run could notice.</summary>
    public int NextInt(int bound)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(bound);
        return (int)Math.BigMul(NextUInt64(), (ulong)bound, out _);
    }

    /// <summary>The SplitMix64 output mixer (a variant of MurmurHash3's finaliser).</summary>
    public static ulong Mix(ulong z)
    {
        unchecked
        {
            z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9UL;
            z = (z ^ (z >> 27)) * 0x94D049BB133111EBUL;
            return z ^ (z >> 31);
        }
    }
}
