using BenchmarkDotNet.Attributes;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Benchmarks;

/// <summary>One row's dot product with one centroid (the pruned pass's near-centroid test), per path; Scalar is the baseline.</summary>
public class DotProductBenchmarks
{
    private float[] _row = [];
    private float[] _centroid = [];

    [Params(384, 768)]
    public int Dimensions { get; set; }

    [GlobalSetup]
    public void Setup() => (_row, _centroid) = KernelData.Uniform(seed: 5, 1, 1, Dimensions);

    [Benchmark(Baseline = true)]
    public float Scalar()
    {
        float sum = 0f;
        for (int p = 0; p < _row.Length; p++)
        {
            sum = MathF.FusedMultiplyAdd(_row[p], _centroid[p], sum);
        }

        return sum;
    }

    [Benchmark]
    public float Dot() => DotProduct.Dot(_row, _centroid);

    [Benchmark]
    public float TensorPrimitivesDot() => System.Numerics.Tensors.TensorPrimitives.Dot(_row, _centroid);
}
