using System.Numerics.Tensors;

namespace TopicGroups.Core.Vectors;

/// <summary>Fitted principal components: the mean they are centred on, the unit directions and their variances.</summary>
public sealed class PrincipalComponentsResult
{
    internal PrincipalComponentsResult(
        float[] mean, float[] components, double[] variances, double totalVariance, int fittedRowCount, int iterations, bool converged)
    {
        Mean = mean;
        Components = components;
        Variances = variances;
        TotalVariance = totalVariance;
        FittedRowCount = fittedRowCount;
        Iterations = iterations;
        Converged = converged;
    }

    public int Dimensions => Mean.Length;

    public int ComponentCount => Variances.Length;

    /// <summary>Mean of the fitted rows (d values).</summary>
    public float[] Mean { get; }

    /// <summary>ComponentCount × d, row-major, unit rows, largest variance first; each row's largest-magnitude entry is positive.</summary>
    public float[] Components { get; }

    /// <summary>Variance of the fitted rows along each component (population variance: divided by the row count).</summary>
    public double[] Variances { get; }

    /// <summary>Sum of the variances along all d axes, Σ‖x − μ‖² / m.</summary>
    public double TotalVariance { get; }

    /// <summary>Rows the components were fitted on (all rows, or the seeded sample).</summary>
    public int FittedRowCount { get; }

    public int Iterations { get; }

    /// <summary>False when MaxIterations was reached first; the components are then the best found.</summary>
    public bool Converged { get; }

    /// <summary>Share of the total variance along component k (0 to 1); 0 when nothing varies.</summary>
    public double VarianceShare(int component) => TotalVariance > 0 ? Variances[component] / TotalVariance : 0;

    /// <summary>coordinates[k] = (row − mean) · component k, for k &lt; ComponentCount.</summary>
    public void Project(ReadOnlySpan<float> row, Span<float> coordinates)
    {
        int d = Dimensions;
        if (row.Length != d)
        {
            throw new ArgumentException($"row has {row.Length} values; the components have {d}.", nameof(row));
        }

        if (coordinates.Length < ComponentCount)
        {
            throw new ArgumentException($"coordinates has room for {coordinates.Length} values; {ComponentCount} are needed.", nameof(coordinates));
        }

        for (int k = 0; k < ComponentCount; k++)
        {
            ReadOnlySpan<float> component = Components.AsSpan(k * d, d);
            coordinates[k] = TensorPrimitives.Dot(row, component) - TensorPrimitives.Dot<float>(Mean, component);
        }
    }
}
