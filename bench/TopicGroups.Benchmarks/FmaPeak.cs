using System.Diagnostics;
using System.Runtime.Intrinsics;

namespace TopicGroups.Benchmarks;

/// <summary>
/// The FMA throughput this core actually delivers: 16 independent FMA chains on registers (enough to
/// hide the latency), widest vectors available, so kernel GFLOP/s can be read as a share of it.
/// </summary>
internal static class FmaPeak
{
    public static double Measure()
    {
        const int steps = 20_000_000;
        double best = 0;
        for (int attempt = 0; attempt < 3; attempt++)
        {
            long start = Stopwatch.GetTimestamp();
            float sink = Vector512.IsHardwareAccelerated ? Run512(steps) : Run256(steps);
            double seconds = Stopwatch.GetElapsedTime(start).TotalSeconds;
            int lanes = Vector512.IsHardwareAccelerated ? 16 : 8;
            best = Math.Max(best, 2.0 * 16 * lanes * steps / seconds / 1e9);
            GC.KeepAlive(sink);
        }

        return best;
    }

    private static float Run512(int steps)
    {
        Vector512<float> m = Vector512.Create(0.999999f);
        Vector512<float> c = Vector512.Create(1e-7f);
        Vector512<float> a0 = Vector512.Create(1f), a1 = a0, a2 = a0, a3 = a0, a4 = a0, a5 = a0, a6 = a0, a7 = a0;
        Vector512<float> a8 = a0, a9 = a0, a10 = a0, a11 = a0, a12 = a0, a13 = a0, a14 = a0, a15 = a0;
        for (int s = 0; s < steps; s++)
        {
            a0 = Vector512.FusedMultiplyAdd(a0, m, c); a1 = Vector512.FusedMultiplyAdd(a1, m, c);
            a2 = Vector512.FusedMultiplyAdd(a2, m, c); a3 = Vector512.FusedMultiplyAdd(a3, m, c);
            a4 = Vector512.FusedMultiplyAdd(a4, m, c); a5 = Vector512.FusedMultiplyAdd(a5, m, c);
            a6 = Vector512.FusedMultiplyAdd(a6, m, c); a7 = Vector512.FusedMultiplyAdd(a7, m, c);
            a8 = Vector512.FusedMultiplyAdd(a8, m, c); a9 = Vector512.FusedMultiplyAdd(a9, m, c);
            a10 = Vector512.FusedMultiplyAdd(a10, m, c); a11 = Vector512.FusedMultiplyAdd(a11, m, c);
            a12 = Vector512.FusedMultiplyAdd(a12, m, c); a13 = Vector512.FusedMultiplyAdd(a13, m, c);
            a14 = Vector512.FusedMultiplyAdd(a14, m, c); a15 = Vector512.FusedMultiplyAdd(a15, m, c);
        }

        return (a0 + a1 + a2 + a3 + a4 + a5 + a6 + a7 + a8 + a9 + a10 + a11 + a12 + a13 + a14 + a15).GetElement(0);
    }

    private static float Run256(int steps)
    {
        Vector256<float> m = Vector256.Create(0.999999f);
        Vector256<float> c = Vector256.Create(1e-7f);
        Vector256<float> a0 = Vector256.Create(1f), a1 = a0, a2 = a0, a3 = a0, a4 = a0, a5 = a0, a6 = a0, a7 = a0;
        Vector256<float> a8 = a0, a9 = a0, a10 = a0, a11 = a0, a12 = a0, a13 = a0, a14 = a0, a15 = a0;
        for (int s = 0; s < steps; s++)
        {
            a0 = Vector256.FusedMultiplyAdd(a0, m, c); a1 = Vector256.FusedMultiplyAdd(a1, m, c);
            a2 = Vector256.FusedMultiplyAdd(a2, m, c); a3 = Vector256.FusedMultiplyAdd(a3, m, c);
            a4 = Vector256.FusedMultiplyAdd(a4, m, c); a5 = Vector256.FusedMultiplyAdd(a5, m, c);
            a6 = Vector256.FusedMultiplyAdd(a6, m, c); a7 = Vector256.FusedMultiplyAdd(a7, m, c);
            a8 = Vector256.FusedMultiplyAdd(a8, m, c); a9 = Vector256.FusedMultiplyAdd(a9, m, c);
            a10 = Vector256.FusedMultiplyAdd(a10, m, c); a11 = Vector256.FusedMultiplyAdd(a11, m, c);
            a12 = Vector256.FusedMultiplyAdd(a12, m, c); a13 = Vector256.FusedMultiplyAdd(a13, m, c);
            a14 = Vector256.FusedMultiplyAdd(a14, m, c); a15 = Vector256.FusedMultiplyAdd(a15, m, c);
        }

        return (a0 + a1 + a2 + a3 + a4 + a5 + a6 + a7 + a8 + a9 + a10 + a11 + a12 + a13 + a14 + a15).GetElement(0);
    }
}
