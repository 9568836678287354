using System.Numerics.Tensors;
using MathNet.Numerics.LinearAlgebra;
using TopicGroups.Core.Clustering;

namespace TopicGroups.Core.Vectors;

/// <summary>
/// The leading principal components of the rows of a matrix: the orthogonal directions along which the
/// rows, centred on their mean, vary most (Pearson, 1901; Hotelling, 1933). They are the top eigenvectors
/// of the covariance C = Xcᵀ Xc / m of the m fitted rows. Found by subspace iteration with a Rayleigh–Ritz
/// step (Saad, Numerical Methods for Large Eigenvalue Problems, 2nd ed., 2011, ch. 5; chapter from memory):
/// C is never formed; each iteration costs two passes over the fitted rows (W = Xc V, then Z = Xcᵀ W, so
/// Z = m C V), which for d in the hundreds or thousands is far cheaper than the d × d covariance and its
/// full eigen-decomposition. The small p × p problem VᵀCV = WᵀW / m is solved by MathNet.Numerics.
/// </summary>
/// <remarks>
/// Determinism: the fitted sample and the start block come from the seed; rows are processed in fixed
/// blocks and partial sums are added in block order, so the result does not depend on the thread count.
/// Sign: eigenvectors are defined up to sign; each component is flipped so that its entry of largest
/// magnitude (the lowest index on a tie) is positive.
/// </remarks>
public static class PrincipalComponents
{
    /// <summary>Fitted rows per parallel work item; fixed so results do not depend on the thread count.</summary>
    private const int BlockRows = 256;

    // Seed streams of their own, away from those of clustering (restart indexes) and quality sampling (near int.MaxValue).
    private const int SampleStream = int.MaxValue / 2;
    private const int StartStream = (int.MaxValue / 2) + 1;

    /// <summary>Fits the components on the rows (a seeded sample of them when there are more than options.SampleSize).</summary>
    /// <exception cref="ArgumentException">An option is out of range.</exception>
    public static PrincipalComponentsResult Fit(
        EmbeddingMatrix rows,
        PrincipalComponentsOptions? options = null,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(rows);
        options ??= new PrincipalComponentsOptions();
        options.Validate();

        int n = rows.Rows;
        int d = rows.Dimensions;
        int wanted = Math.Min(options.ComponentCount, d);
        int workers = options.MaxDegreeOfParallelism == -1 ? Environment.ProcessorCount : options.MaxDegreeOfParallelism;
        int[] sample = SampleRows(n, options.SampleSize, options.Seed);
        int m = sample.Length;

        double[] mean = Mean(rows, sample);
        float[] meanF = ToFloat(mean);
        double totalVariance = TotalVariance(rows, sample, mean);

        // Fewer than two rows, or all rows equal: nothing varies, and any orthonormal axes describe it.
        if (m < 2 || !(totalVariance > 0))
        {
            return new PrincipalComponentsResult(meanF, UnitAxes(wanted, d), new double[wanted], 0, m, iterations: 0, converged: true);
        }

        // p directions are iterated; the extra ones make the wanted ones converge at the rate λ(p+1)/λ(k), not λ(k+1)/λ(k).
        int p = Math.Min(Math.Min(wanted + options.ExtraDirections, d), m);
        var startRandom = SplitMix64.ForStream(options.Seed, StartStream);
        double[] basis = new double[p * d];            // V: p × d, row k is direction k (orthonormal)
        for (int i = 0; i < basis.Length; i++)
        {
            basis[i] = startRandom.NextDouble() - 0.5;
        }

        Orthonormalise(basis, p, d, ref startRandom);

        double[] projected = new double[m * p];        // W = Xc V: m × p, row-major
        double[] product = new double[p * d];          // Z = Xcᵀ W = m C V: p × d, row k for direction k
        double[] ritzVectors = new double[p * d];      // U = V Y, ordered by Ritz value, largest first
        double[] ritzValues = new double[p];
        bool converged = false;
        int iteration = 0;
        while (iteration < options.MaxIterations && !converged)
        {
            cancellationToken.ThrowIfCancellationRequested();
            iteration++;
            ProjectSample(rows, sample, meanF, basis, p, projected, workers);
            MultiplyTransposed(rows, sample, mean, projected, p, product, workers);

            // Rayleigh–Ritz: H = Vᵀ C V = Wᵀ W / m, eigenpairs (θ, y) largest first; Ritz vectors V y.
            Matrix<double> h = Matrix<double>.Build.Dense(p, p);
            for (int a = 0; a < p; a++)
            {
                for (int b = a; b < p; b++)
                {
                    double sum = 0;
                    for (int s = 0; s < m; s++)
                    {
                        sum += projected[s * p + a] * projected[s * p + b];
                    }

                    h[a, b] = sum / m;
                    h[b, a] = sum / m;
                }
            }

            var evd = h.Evd(MathNet.Numerics.LinearAlgebra.Symmetricity.Symmetric);
            int[] order = Enumerable.Range(0, p).OrderByDescending(j => evd.EigenValues[j].Real).ThenBy(j => j).ToArray();
            Matrix<double> y = evd.EigenVectors;

            // Residual of each wanted pair: C u − θ u = (Z y) / m − θ (V y). Converged when all are small next to θ₁.
            double largest = Math.Max(evd.EigenValues[order[0]].Real, 0);
            double worstResidual = 0;
            double[] next = new double[p * d];
            for (int r = 0; r < p; r++)
            {
                int j = order[r];
                ritzValues[r] = Math.Max(evd.EigenValues[j].Real, 0);
                Span<double> u = ritzVectors.AsSpan(r * d, d);
                Span<double> cu = next.AsSpan(r * d, d);
                u.Clear();
                cu.Clear();
                for (int k = 0; k < p; k++)
                {
                    double weight = y[k, j];
                    TensorPrimitives.MultiplyAdd(basis.AsSpan(k * d, d), weight, u, u);
                    TensorPrimitives.MultiplyAdd(product.AsSpan(k * d, d), weight / m, cu, cu);
                }

                if (r < wanted)
                {
                    double residual = 0;
                    for (int i = 0; i < d; i++)
                    {
                        double e = cu[i] - ritzValues[r] * u[i];
                        residual += e * e;
                    }

                    worstResidual = Math.Max(worstResidual, Math.Sqrt(residual));
                }
            }

            converged = worstResidual <= options.ResidualTolerance * largest;
            if (!converged)
            {
                // Next basis: the Ritz-rotated C V, orthonormalised in Ritz order so the leading directions stay first.
                Array.Copy(next, basis, basis.Length);
                Orthonormalise(basis, p, d, ref startRandom);
            }
        }

        float[] components = new float[wanted * d];
        double[] variances = new double[wanted];
        for (int r = 0; r < wanted; r++)
        {
            Span<double> u = ritzVectors.AsSpan(r * d, d);
            double norm = Math.Sqrt(TensorPrimitives.SumOfSquares<double>(u));
            int largestEntry = TensorPrimitives.IndexOfMaxMagnitude<double>(u);
            double scale = (u[largestEntry] < 0 ? -1 : 1) / norm;
            for (int i = 0; i < d; i++)
            {
                components[r * d + i] = (float)(u[i] * scale);
            }

            variances[r] = ritzValues[r];
        }

        return new PrincipalComponentsResult(meanF, components, variances, totalVariance, m, iteration, converged);
    }

    /// <summary>All rows when n ≤ sampleSize; otherwise sampleSize distinct rows by a seeded partial Fisher–Yates shuffle, ascending.</summary>
    internal static int[] SampleRows(int n, int sampleSize, ulong seed)
    {
        if (n <= sampleSize)
        {
            return Enumerable.Range(0, n).ToArray();
        }

        var random = SplitMix64.ForStream(seed, SampleStream);
        int[] permutation = Enumerable.Range(0, n).ToArray();
        for (int i = 0; i < sampleSize; i++)
        {
            int j = i + random.NextInt(n - i);
            (permutation[i], permutation[j]) = (permutation[j], permutation[i]);
        }

        int[] sample = permutation.AsSpan(0, sampleSize).ToArray();
        Array.Sort(sample);
        return sample;
    }

    private static double[] Mean(EmbeddingMatrix rows, int[] sample)
    {
        int d = rows.Dimensions;
        double[] sum = new double[d];
        float[] blockSum = new float[d];
        for (int start = 0; start < sample.Length; start += BlockRows)
        {
            // Float sums over a block of at most 256 rows, then double across blocks: float's error stays near 1e-6.
            blockSum.AsSpan().Clear();
            int end = Math.Min(sample.Length, start + BlockRows);
            for (int s = start; s < end; s++)
            {
                TensorPrimitives.Add(blockSum, rows.Row(sample[s]), blockSum);
            }

            for (int i = 0; i < d; i++)
            {
                sum[i] += blockSum[i];
            }
        }

        TensorPrimitives.Divide(sum, sample.Length, sum);
        return sum;
    }

    private static double TotalVariance(EmbeddingMatrix rows, int[] sample, double[] mean)
    {
        // Σ ||x − μ||² / m, in double, element by element: the difference of two near-equal sums would lose it.
        double total = 0;
        foreach (int row in sample)
        {
            Span<float> x = rows.Row(row);
            for (int i = 0; i < x.Length; i++)
            {
                double e = x[i] - mean[i];
                total += e * e;
            }
        }

        return total / sample.Length;
    }

    /// <summary>W[s, k] = (x_s − μ) · v_k for every fitted row s and direction k.</summary>
    private static void ProjectSample(EmbeddingMatrix rows, int[] sample, float[] mean, double[] basis, int p, double[] projected, int workers)
    {
        int d = rows.Dimensions;
        float[] basisF = ToFloat(basis);
        double[] meanDot = new double[p];
        for (int k = 0; k < p; k++)
        {
            meanDot[k] = TensorPrimitives.Dot<float>(mean, basisF.AsSpan(k * d, d));
        }

        var blocks = new RowBlocks(sample.Length, workers);
        blocks.ForEach((sample.Length + BlockRows - 1) / BlockRows, (block, _) =>
        {
            int end = Math.Min(sample.Length, (block + 1) * BlockRows);
            for (int s = block * BlockRows; s < end; s++)
            {
                ReadOnlySpan<float> x = rows.Row(sample[s]);
                for (int k = 0; k < p; k++)
                {
                    projected[s * p + k] = TensorPrimitives.Dot(x, basisF.AsSpan(k * d, d)) - meanDot[k];
                }
            }
        });
    }

    /// <summary>Z = Xcᵀ W: row k is Σ_s W[s, k] (x_s − μ) = Σ_s W[s, k] x_s − μ Σ_s W[s, k].</summary>
    private static void MultiplyTransposed(EmbeddingMatrix rows, int[] sample, double[] mean, double[] projected, int p, double[] product, int workers)
    {
        int d = rows.Dimensions;
        int blockCount = (sample.Length + BlockRows - 1) / BlockRows;
        float[][] partials = new float[blockCount][];
        var blocks = new RowBlocks(sample.Length, workers);
        blocks.ForEach(blockCount, (block, _) =>
        {
            float[] partial = new float[p * d];
            int end = Math.Min(sample.Length, (block + 1) * BlockRows);
            for (int s = block * BlockRows; s < end; s++)
            {
                ReadOnlySpan<float> x = rows.Row(sample[s]);
                for (int k = 0; k < p; k++)
                {
                    Span<float> target = partial.AsSpan(k * d, d);
                    TensorPrimitives.MultiplyAdd(x, (float)projected[s * p + k], target, target);
                }
            }

            partials[block] = partial;
        });

        Array.Clear(product);
        foreach (float[] partial in partials)   // block order: the same sums for any thread count
        {
            for (int i = 0; i < partial.Length; i++)
            {
                product[i] += partial[i];
            }
        }

        for (int k = 0; k < p; k++)
        {
            double columnSum = 0;
            for (int s = 0; s < sample.Length; s++)
            {
                columnSum += projected[s * p + k];
            }

            TensorPrimitives.MultiplyAdd(mean, -columnSum, product.AsSpan(k * d, d), product.AsSpan(k * d, d));
        }
    }

    /// <summary>
    /// Modified Gram–Schmidt on the p rows of <paramref name="basis"/>, twice over for accuracy. A row that
    /// vanishes (the fitted rows span fewer than p directions) is replaced by a seeded random one.
    /// </summary>
    private static void Orthonormalise(double[] basis, int p, int d, ref SplitMix64 random)
    {
        for (int k = 0; k < p; k++)
        {
            Span<double> v = basis.AsSpan(k * d, d);
            double before = Math.Sqrt(TensorPrimitives.SumOfSquares<double>(v));
            for (int attempt = 0; ; attempt++)
            {
                for (int pass = 0; pass < 2; pass++)
                {
                    for (int j = 0; j < k; j++)
                    {
                        ReadOnlySpan<double> u = basis.AsSpan(j * d, d);
                        TensorPrimitives.MultiplyAdd(u, -TensorPrimitives.Dot(u, v), v, v);
                    }
                }

                double norm = Math.Sqrt(TensorPrimitives.SumOfSquares<double>(v));
                if (norm > 1e-10 * Math.Max(before, 1e-300) && norm > 0)
                {
                    TensorPrimitives.Divide(v, norm, v);
                    break;
                }

                if (attempt > 8)
                {
                    throw new InvalidOperationException($"Could not complete an orthonormal basis of {p} directions in {d} dimensions.");
                }

                for (int i = 0; i < d; i++)
                {
                    v[i] = random.NextDouble() - 0.5;
                }

                before = Math.Sqrt(TensorPrimitives.SumOfSquares<double>(v));
            }
        }
    }

    private static float[] UnitAxes(int count, int d)
    {
        float[] axes = new float[count * d];
        for (int k = 0; k < count; k++)
        {
            axes[k * d + k] = 1f;
        }

        return axes;
    }

    private static float[] ToFloat(double[] values)
    {
        float[] result = new float[values.Length];
        for (int i = 0; i < values.Length; i++)
        {
            result[i] = (float)values[i];
        }

        return result;
    }
}
