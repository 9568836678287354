using System.Runtime.Intrinsics;
using System.Runtime.Intrinsics.X86;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.TestSupport;

/// <summary>Every BlockScores path as one callable shape, and the ones this machine can run.</summary>
internal static class BlockScoresPaths
{
    public sealed record Path(string Name, Action<float[], float[], int, float[]> Compute)
    {
        public override string ToString() => Name;
    }

    public static readonly Path Scalar = new("Scalar", (rows, centroids, d, scores) => BlockScores.Scalar(rows, centroids, d, scores));

    public static readonly Path ScalarPacked = new("ScalarPacked", (rows, centroids, d, scores) =>
        BlockScores.ScalarPacked(rows, Pack(centroids, d), scores, centroids.Length / d));

    public static readonly Path Vector256 = new("Vector256Path", (rows, centroids, d, scores) =>
        BlockScores.Vector256Path(rows, Pack(centroids, d), scores, centroids.Length / d));

    public static readonly Path Vector512 = new("Vector512Path", (rows, centroids, d, scores) =>
        BlockScores.Vector512Path(rows, Pack(centroids, d), scores, centroids.Length / d));

    public static readonly Path Dispatched = new("Compute", (rows, centroids, d, scores) => BlockScores.Compute(rows, centroids, d, scores));

    /// <summary>Every path except the Scalar definition that this machine supports (the dispatcher included).</summary>
    public static IEnumerable<Path> Available()
    {
        yield return ScalarPacked;
        if (System.Runtime.Intrinsics.Vector256.IsHardwareAccelerated && Fma.IsSupported)
        {
            yield return Vector256;
        }

        if (System.Runtime.Intrinsics.Vector512.IsHardwareAccelerated)
        {
            yield return Vector512;
        }

        yield return Dispatched;
    }

    public static float[] Run(Path path, float[] rows, float[] centroids, int d)
    {
        float[] scores = new float[rows.Length / d * (centroids.Length / d)];
        path.Compute(rows, centroids, d, scores);
        return scores;
    }

    private static CentroidPanel Pack(float[] centroids, int d)
    {
        var panel = new CentroidPanel(centroids.Length / d, d);
        panel.Pack(centroids);
        return panel;
    }
}
