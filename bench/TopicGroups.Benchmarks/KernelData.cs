namespace TopicGroups.Benchmarks;

/// <summary>Seeded benchmark inputs (xorshift-free: a fixed linear congruential sequence is plenty for timing).</summary>
internal static class KernelData
{
    public static (float[] Rows, float[] Centroids) Uniform(int seed, int n, int k, int d)
    {
        var random = new Random(seed);
        float[] rows = new float[(long)n * d > int.MaxValue ? throw new ArgumentOutOfRangeException(nameof(n)) : n * d];
        float[] centroids = new float[k * d];
        for (int i = 0; i < rows.Length; i++)
        {
            rows[i] = (float)(random.NextDouble() * 2 - 1);
        }

        for (int i = 0; i < centroids.Length; i++)
        {
            centroids[i] = (float)(random.NextDouble() * 2 - 1);
        }

        return (rows, centroids);
    }
}
