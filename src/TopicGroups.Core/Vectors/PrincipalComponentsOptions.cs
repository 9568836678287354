namespace TopicGroups.Core.Vectors;

public static class PrincipalComponentsDefaults
{
    public const int ComponentCount = 2;
    public const int SampleSize = 5_000;
    public const int ExtraDirections = 6;
    public const int MaxIterations = 300;
    public const double ResidualTolerance = 1e-6;
}

/// <summary>Settings of <see cref="PrincipalComponents.Fit"/>.</summary>
public sealed record PrincipalComponentsOptions
{
    /// <value>The default is 2 components (a map).</value>
    public int ComponentCount { get; init; } = PrincipalComponentsDefaults.ComponentCount;

    /// <summary>Rows the components are fitted on: every row when there are no more, else a seeded uniform sample.</summary>
    /// <value>The default is 5,000 rows: enough for the leading directions of a batch of any size.</value>
    public int SampleSize { get; init; } = PrincipalComponentsDefaults.SampleSize;

    /// <value>The default is 0.</value>
    public ulong Seed { get; init; }

    /// <summary>Directions iterated beside the wanted ones; they speed convergence when leading variances are close.</summary>
    /// <value>The default is 6.</value>
    public int ExtraDirections { get; init; } = PrincipalComponentsDefaults.ExtraDirections;

    /// <value>The default is 300 iterations.</value>
    public int MaxIterations { get; init; } = PrincipalComponentsDefaults.MaxIterations;

    /// <summary>Stop when every wanted pair's residual ‖C u − θ u‖ is at most this times the largest variance θ₁.</summary>
    /// <value>The default is 1e-6.</value>
    public double ResidualTolerance { get; init; } = PrincipalComponentsDefaults.ResidualTolerance;

    /// <value>The default is -1: all cores. Results do not depend on it.</value>
    public int MaxDegreeOfParallelism { get; init; } = -1;

    internal void Validate()
    {
        if (ComponentCount < 1)
        {
            throw new ArgumentException($"ComponentCount is {ComponentCount}; it must be at least 1.", nameof(ComponentCount));
        }

        if (SampleSize < 2)
        {
            throw new ArgumentException($"SampleSize is {SampleSize}; it must be at least 2.", nameof(SampleSize));
        }

        if (ExtraDirections < 0)
        {
            throw new ArgumentException($"ExtraDirections is {ExtraDirections}; it must be zero or more.", nameof(ExtraDirections));
        }

        if (MaxIterations < 1)
        {
            throw new ArgumentException($"MaxIterations is {MaxIterations}; it must be at least 1.", nameof(MaxIterations));
        }

        if (!(ResidualTolerance > 0))
        {
            throw new ArgumentException($"ResidualTolerance is {ResidualTolerance}; it must be positive.", nameof(ResidualTolerance));
        }

        if (MaxDegreeOfParallelism is 0 or < -1)
        {
            throw new ArgumentException(
                $"MaxDegreeOfParallelism is {MaxDegreeOfParallelism}; use -1 for all cores or a positive count.", nameof(MaxDegreeOfParallelism));
        }
    }
}
