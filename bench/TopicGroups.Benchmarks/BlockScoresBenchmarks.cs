using System.Runtime.Intrinsics;
using BenchmarkDotNet.Attributes;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Benchmarks;

/// <summary>
/// The assignment kernel on one block of rows against all centroids (one thread), per path.
/// Scalar is the baseline; paths the machine lacks are skipped at run time.
/// </summary>
[MemoryDiagnoser]
public class BlockScoresBenchmarks
{
    private float[] _rows = [];
    private float[] _centroids = [];
    private float[] _scores = [];
    private CentroidPanel _panel = null!;

    /// <summary>Rows per call: one fit block.</summary>
    [Params(256)]
    public int Rows { get; set; }

    [Params(384)]
    public int Dimensions { get; set; }

    [Params(32, 100)]
    public int Centroids { get; set; }

    [GlobalSetup]
    public void Setup()
    {
        (_rows, _centroids) = KernelData.Uniform(seed: 7, Rows, Centroids, Dimensions);
        _scores = new float[Rows * Centroids];
        _panel = new CentroidPanel(Centroids, Dimensions);
        _panel.Pack(_centroids);
    }

    [Benchmark(Baseline = true)]
    public void Scalar() => BlockScores.Scalar(_rows, _centroids, Dimensions, _scores);

    [Benchmark]
    public void Vector256Path()
    {
        if (Vector256.IsHardwareAccelerated)
        {
            BlockScores.Vector256Path(_rows, _panel, _scores, Centroids);
        }
    }

    [Benchmark]
    public void Vector512Path()
    {
        if (Vector512.IsHardwareAccelerated)
        {
            BlockScores.Vector512Path(_rows, _panel, _scores, Centroids);
        }
    }
}
