using TopicGroups.Core.Clustering;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Grouping;

/// <summary>
/// Where routed documents landed, one slot per document in input order. Arrays, not per-document objects:
/// a routing call may carry many thousands of documents.
/// </summary>
public sealed class RoutingResult
{
    public required int[] GroupIds { get; init; }

    /// <summary>Cosine of each document to the centre of its group.</summary>
    public required float[] Similarities { get; init; }

    /// <summary>Similarity to the own centre minus similarity to the runner-up's (0 when the grouping has one group).</summary>
    public required float[] Margins { get; init; }

    /// <summary>The next most similar group (0 when the grouping has one group).</summary>
    public required int[] RunnerUpGroupIds { get; init; }

    /// <summary>True when the document fits no group: its similarity is far below its group's usual, by the saved outlier rule.</summary>
    public required bool[] IsOutlier { get; init; }

    public int Count => GroupIds.Length;
}

/// <summary>
/// Routes new documents into a saved grouping: each goes to the most similar saved centre (cosine, ties to the
/// earlier group), with its runner-up and margin, and is flagged when it fits no group. The flag applies the
/// grouping's own outlier rule (modified z-score, Iglewicz &amp; Hoaglin, 1993) against the median and MAD of
/// the group's members at save time, so a routed document is judged exactly as a member was.
/// </summary>
public static class GroupRouting
{
    /// <summary>Normalises <paramref name="rows"/> in place, then routes every row.</summary>
    /// <exception cref="ArgumentException">The rows' dimension differs from the grouping's, or a row cannot be normalised.</exception>
    /// <exception cref="OperationCanceledException">The token was cancelled before the pass started.</exception>
    public static RoutingResult Route(
        GroupingSnapshot grouping,
        EmbeddingMatrix rows,
        int maxDegreeOfParallelism = -1,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(grouping);
        ArgumentNullException.ThrowIfNull(rows);
        int d = rows.Dimensions;
        int k = grouping.Groups.Count;
        if (d != grouping.Dimensions)
        {
            throw new ArgumentException(
                $"The documents have {d} dimensions but the grouping was made from {grouping.Dimensions}; route embeddings from the same model.",
                nameof(rows));
        }

        if (k == 0 || grouping.Centroids.Length != k * d)
        {
            throw new ArgumentException($"The grouping has {grouping.Centroids.Length} centroid values for {k} groups of {d} dimensions.", nameof(grouping));
        }

        if (maxDegreeOfParallelism == 0 || maxDegreeOfParallelism < -1)
        {
            throw new ArgumentException(
                $"maxDegreeOfParallelism is {maxDegreeOfParallelism}; use -1 for all cores or a positive thread count.", nameof(maxDegreeOfParallelism));
        }

        RowNormalisation.NormaliseInPlace(rows);
        int n = rows.Rows;
        var result = new RoutingResult
        {
            GroupIds = new int[n],
            Similarities = new float[n],
            Margins = new float[n],
            RunnerUpGroupIds = new int[n],
            IsOutlier = new bool[n],
        };
        if (n == 0)
        {
            return result;
        }

        // Per group: id, size and the outlier rule's statistics, read once instead of per document.
        int[] ids = new int[k];
        int[] sizes = new int[k];
        double[] medians = new double[k];
        double[] mads = new double[k];
        for (int g = 0; g < k; g++)
        {
            SnapshotGroup group = grouping.Groups[g];
            (ids[g], sizes[g], medians[g], mads[g]) = (group.Id, group.Size, group.SimilarityMedian, group.SimilarityMad);
        }

        int workers = maxDegreeOfParallelism == -1 ? Environment.ProcessorCount : maxDegreeOfParallelism;
        var blocks = new RowBlocks(n, workers);
        using var panel = new CentroidPanel(k, d);
        panel.Pack(grouping.Centroids);
        float[][] scratch = new float[Math.Min(workers, blocks.Count)][];
        float[] values = rows.Values;
        double threshold = grouping.OutlierScoreThreshold;
        int minimumGroupSize = grouping.OutlierMinimumGroupSize;

        cancellationToken.ThrowIfCancellationRequested(); // routing is one pass of milliseconds per 10,000 rows: checked once
        blocks.ForEachBlock((block, worker) =>
        {
            float[] scores = scratch[worker] ??= new float[RowBlocks.BlockRows * k];
            int start = blocks.Start(block);
            int length = blocks.Length(block);

            // scores: length × k, row-major; scores[r * k + g] = cos(row start + r, centre g), both unit length.
            BlockScores.Compute(values.AsSpan(start * d, length * d), panel, scores, k);
            for (int r = 0; r < length; r++)
            {
                ReadOnlySpan<float> rowScores = scores.AsSpan(r * k, k);
                int best = 0;
                float bestScore = rowScores[0];
                int second = -1;
                float secondScore = float.NegativeInfinity;
                for (int g = 1; g < k; g++)
                {
                    float score = rowScores[g];
                    if (score > bestScore)
                    {
                        (second, secondScore) = (best, bestScore);
                        (best, bestScore) = (g, score);
                    }
                    else if (score > secondScore)
                    {
                        (second, secondScore) = (g, score);
                    }
                }

                int i = start + r;
                result.GroupIds[i] = ids[best];
                result.Similarities[i] = bestScore;
                result.Margins[i] = second >= 0 ? bestScore - secondScore : 0f;
                result.RunnerUpGroupIds[i] = second >= 0 ? ids[second] : 0;
                result.IsOutlier[i] = OutlierRule.IsOutlier(bestScore, sizes[best], medians[best], mads[best], threshold, minimumGroupSize);
            }
        });

        return result;
    }
}
