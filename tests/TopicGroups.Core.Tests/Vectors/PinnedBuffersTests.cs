using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Vectors;

public sealed class PinnedBuffersTests
{
    [Fact]
    public void Rent_AfterReturn_GivesTheSameBufferBack()
    {
        var buffers = new PinnedBuffers();
        float[] first = buffers.Rent(10_000);
        buffers.Return(first);
        Assert.Equal(first.Length * sizeof(float), buffers.IdleBytes);

        Assert.Same(first, buffers.Rent(9_000));
        Assert.Equal(0, buffers.IdleBytes);
    }

    [Fact]
    public void Rent_NeverHandsOneBufferToTwoRenters()
    {
        var buffers = new PinnedBuffers();
        float[] a = buffers.Rent(1_000);
        buffers.Return(a);
        float[] b = buffers.Rent(1_000);
        float[] c = buffers.Rent(1_000);
        Assert.NotSame(b, c);
    }

    [Fact]
    public void Rent_DoesNotHandOutABufferMoreThanTwiceTheSizeAsked()
    {
        var buffers = new PinnedBuffers();
        float[] large = buffers.Rent(100_000);
        buffers.Return(large);

        float[] small = buffers.Rent(1_000);
        Assert.NotSame(large, small);
        Assert.True(small.Length >= 1_000);
    }

    [Fact]
    public void Return_PastTheLimit_DropsTheSmallestIdleBuffers()
    {
        var buffers = new PinnedBuffers(retainedBytesLimit: 3 * 4_000 * sizeof(float));
        float[] small = buffers.Rent(2_000);
        float[] medium = buffers.Rent(4_000);
        float[] large = buffers.Rent(8_000);
        buffers.Return(small);
        buffers.Return(medium);
        buffers.Return(large);   // 2,000 + 4,000 + 8,000 floats would pass 12,000: the smallest go first

        Assert.Equal((4_000 + 8_000) * sizeof(float), buffers.IdleBytes);
        Assert.Same(large, buffers.Rent(8_000));
        Assert.Same(medium, buffers.Rent(4_000));
    }

    [Fact]
    public void Return_ABufferLargerThanTheLimit_IsNotKept()
    {
        var buffers = new PinnedBuffers(retainedBytesLimit: 1_000 * sizeof(float));
        buffers.Return(buffers.Rent(2_000));
        Assert.Equal(0, buffers.IdleBytes);
    }

    [Fact]
    public void Panel_OverStaleStorage_ScoresAsTheScalarDefinition()
    {
        // A reused buffer holds the last user's values; here NaN everywhere, so any value the panel reads
        // without having written it (padding columns, the tail of the last panel) would poison the scores.
        const int k = 37, d = 19;
        var buffers = new PinnedBuffers();
        float[] stale = buffers.Rent(64 * d + 64);
        Array.Fill(stale, float.NaN);
        buffers.Return(stale);

        var (rows, centroids) = TestData.IntegerValued(seed: 5, n: 11, k, d);
        using var panel = new CentroidPanel(k, d, buffers);
        panel.Pack(centroids);
        float[] scores = new float[11 * k];
        BlockScores.Compute(rows, panel, scores, k);

        Assert.Equal(BlockScoresPaths.Run(BlockScoresPaths.Scalar, rows, centroids, d), scores);
    }

    [Fact]
    public void PackRows_OverStaleStorage_InPieces_EqualsPackingEveryRowAsACentroid()
    {
        // The seeding pool packs its rows panel by panel from several threads: the pieces must add up to the whole.
        const int n = 150, d = 7;
        var buffers = new PinnedBuffers();
        float[] stale = buffers.Rent(160 * d + 64);
        Array.Fill(stale, float.NaN);
        buffers.Return(stale);
        var (rows, _) = TestData.IntegerValued(seed: 9, n, k: 1, d);
        int[] everyRow = Enumerable.Range(0, n).ToArray();

        using var pieces = new CentroidPanel(n, d, buffers);
        for (int panel = pieces.PanelCount - 1; panel >= 0; panel--)
        {
            pieces.PackRows(rows, everyRow, panel, 1);
        }

        using var whole = new CentroidPanel(n, d);
        whole.Pack(rows);
        Assert.Equal(whole.Values.ToArray(), pieces.Values.ToArray());
    }

    [Fact]
    public void Panel_AfterDispose_RefusesUse()
    {
        var panel = new CentroidPanel(3, 4, new PinnedBuffers());
        panel.Dispose();
        panel.Dispose();   // twice is harmless
        Assert.Throws<ObjectDisposedException>(() => panel.Values.Length);
    }
}
