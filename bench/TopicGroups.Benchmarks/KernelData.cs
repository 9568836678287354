namespace TopicGroups.Benchmarks;

/// <summary>Seeded benchmark inputs (System.Random with a seed: fine for timing, not part of any result).</summary>
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

    /// <summary>
    /// Unit rows around <paramref name="trueGroups"/> random directions with unequal shares (group g gets
    /// weight 1 / (g + 1)), plus Gaussian noise per coordinate: closer to real embeddings than uniform noise.
    /// </summary>
    public static float[] Clustered(int seed, int n, int d, int trueGroups, double noise)
    {
        var random = new Random(seed);
        float[] directions = new float[trueGroups * d];
        for (int i = 0; i < directions.Length; i++)
        {
            directions[i] = (float)Gaussian(random);
        }

        double[] cumulative = new double[trueGroups];
        double total = 0;
        for (int g = 0; g < trueGroups; g++)
        {
            total += 1.0 / (g + 1);
            cumulative[g] = total;
        }

        float[] rows = new float[n * d];
        double scale = noise * Math.Sqrt(1.0);
        for (int i = 0; i < n; i++)
        {
            double u = random.NextDouble() * total;
            int g = Array.FindIndex(cumulative, c => c > u);
            for (int p = 0; p < d; p++)
            {
                rows[i * d + p] = directions[g * d + p] + (float)(scale * Gaussian(random));
            }
        }

        return rows;
    }

    private static double Gaussian(Random random) =>
        Math.Sqrt(-2.0 * Math.Log(1.0 - random.NextDouble())) * Math.Cos(2.0 * Math.PI * random.NextDouble());
}
