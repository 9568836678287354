using TopicGroups.Core.Clustering;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.TestSupport;

/// <summary>Seeded synthetic matrices for Vectors and Clustering tests (SplitMix64, so the same on every runtime).</summary>
internal static class TestData
{
    /// <summary>Rows n × d and centroids k × d of integers in [-8, 8]: every dot product up to d = 384 is exact in float32.</summary>
    public static (float[] Rows, float[] Centroids) IntegerValued(int seed, int n, int k, int d)
    {
        var random = new SplitMix64((ulong)seed);
        float[] rows = new float[n * d];
        float[] centroids = new float[k * d];
        for (int i = 0; i < rows.Length; i++)
        {
            rows[i] = random.NextInt(17) - 8;
        }

        for (int i = 0; i < centroids.Length; i++)
        {
            centroids[i] = random.NextInt(17) - 8;
        }

        return (rows, centroids);
    }

    /// <summary>Rows n × d and centroids k × d uniform in [-1, 1).</summary>
    public static (float[] Rows, float[] Centroids) UniformValued(int seed, int n, int k, int d)
    {
        var random = new SplitMix64((ulong)seed);
        float[] rows = new float[n * d];
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
    /// n unit rows in d dimensions around <paramref name="trueGroups"/> random directions: each row is its
    /// direction plus Gaussian noise of standard deviation <paramref name="noise"/> per coordinate, normalised.
    /// Row i belongs to true group i % trueGroups.
    /// </summary>
    public static EmbeddingMatrix UnitClusters(int seed, int n, int d, int trueGroups, double noise, out int[] labels)
    {
        var random = new SplitMix64((ulong)seed);
        double[] directions = new double[trueGroups * d];
        for (int i = 0; i < directions.Length; i++)
        {
            directions[i] = Gaussian(ref random);
        }

        for (int g = 0; g < trueGroups; g++)
        {
            Normalise(directions.AsSpan(g * d, d));
        }

        labels = new int[n];
        var matrix = EmbeddingMatrix.Allocate(n, d);
        for (int i = 0; i < n; i++)
        {
            int g = i % trueGroups;
            labels[i] = g;
            Span<float> row = matrix.Row(i);
            for (int p = 0; p < d; p++)
            {
                row[p] = (float)(directions[g * d + p] + noise * Gaussian(ref random));
            }
        }

        RowNormalisation.NormaliseInPlace(matrix);
        return matrix;
    }

    /// <summary>
    /// Groups of very uneven size whose centres share a common direction, like sentence embeddings: group g (g = 0, 1,
    /// ...) holds about n / ((g + 1) H) rows (Zipf sizes, H the harmonic number; at least <paramref name="minimumSize"/>),
    /// centres √ρ u₀ + √(1 − ρ) u_g (pairwise cosine about ρ = <paramref name="centreCorrelation"/>), rows the centre
    /// plus Gaussian noise of deviation <paramref name="noise"/> per coordinate, normalised (cosine to the own centre
    /// about 1 / √(1 + noise² d)). Rows are in group order. Modelled on ../shared/peers/gen.py's hard setting.
    /// </summary>
    public static EmbeddingMatrix UnevenUnitClusters(
        int seed, int n, int d, int trueGroups, double centreCorrelation, double noise, int minimumSize, out int[] labels)
    {
        var random = new SplitMix64((ulong)seed);
        double[] common = new double[d];
        for (int p = 0; p < d; p++)
        {
            common[p] = Gaussian(ref random);
        }

        Normalise(common);
        double[] centres = new double[trueGroups * d];
        for (int g = 0; g < trueGroups; g++)
        {
            Span<double> own = centres.AsSpan(g * d, d);
            for (int p = 0; p < d; p++)
            {
                own[p] = Gaussian(ref random);
            }

            Normalise(own);
            for (int p = 0; p < d; p++)
            {
                own[p] = Math.Sqrt(centreCorrelation) * common[p] + Math.Sqrt(1 - centreCorrelation) * own[p];
            }

            Normalise(own);
        }

        double harmonic = Enumerable.Range(1, trueGroups).Sum(r => 1.0 / r);
        int[] sizes = Enumerable.Range(0, trueGroups).Select(g => Math.Max(minimumSize, (int)(n / ((g + 1) * harmonic)))).ToArray();
        labels = new int[sizes.Sum()];
        var matrix = EmbeddingMatrix.Allocate(labels.Length, d);
        int row = 0;
        for (int g = 0; g < trueGroups; g++)
        {
            for (int member = 0; member < sizes[g]; member++, row++)
            {
                labels[row] = g;
                Span<float> values = matrix.Row(row);
                for (int p = 0; p < d; p++)
                {
                    values[p] = (float)(centres[g * d + p] + noise * Gaussian(ref random));
                }
            }
        }

        RowNormalisation.NormaliseInPlace(matrix);
        return matrix;
    }

    /// <summary>n copies of one unit row: no two rows can be told apart.</summary>
    public static EmbeddingMatrix Duplicates(int n, int d)
    {
        var matrix = EmbeddingMatrix.Allocate(n, d);
        for (int i = 0; i < n; i++)
        {
            for (int p = 0; p < d; p++)
            {
                matrix.Row(i)[p] = p + 1;
            }
        }

        RowNormalisation.NormaliseInPlace(matrix);
        return matrix;
    }

    public static double Gaussian(ref SplitMix64 random)
    {
        // Box–Muller; 1 − u keeps the logarithm's argument in (0, 1].
        double u = 1.0 - random.NextDouble();
        double v = random.NextDouble();
        return Math.Sqrt(-2.0 * Math.Log(u)) * Math.Cos(2.0 * Math.PI * v);
    }

    private static void Normalise(Span<double> values)
    {
        double norm = 0;
        foreach (double value in values)
        {
            norm += value * value;
        }

        norm = Math.Sqrt(norm);
        for (int p = 0; p < values.Length; p++)
        {
            values[p] /= norm;
        }
    }
}
