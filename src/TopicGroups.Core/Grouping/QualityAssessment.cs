using TopicGroups.Core.Clustering;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Grouping;

/// <summary>
/// Quality figures of a finished clustering: the sampled silhouette (overall and per group), each group's
/// nearest other centre, and the suggestions of docs/algorithms.md §9. Reads the clustering; changes nothing.
/// </summary>
internal static class QualityAssessment
{
    // Generator streams, far from the restart streams 0, 1, 2, ...; the sample stream is the search's, so a
    // batch no larger than the candidate row limit is scored on the same sample as its curve.
    private const int SampleStream = int.MaxValue - 1;
    private const int SplitStreamBase = int.MaxValue - 16;
    private const int SplitRestartCount = 2;
    private const int SplitMaxIterations = 20;
    private const double SplitConvergenceTolerance = 1e-4;

    /// <param name="rows">The batch's unit rows, n × d.</param>
    /// <param name="clustering">The kept run.</param>
    /// <param name="membersOfCluster">Row indexes of each cluster (by centroid index).</param>
    /// <param name="cohesionOfCluster">Mean cosine of each cluster's members to its centre.</param>
    /// <param name="idOfCluster">The public group id (1..k) of each cluster.</param>
    public static (GroupingQuality Overall, GroupQuality[] PerCluster) Assess(
        EmbeddingMatrix rows,
        ClusteringResult clustering,
        int[][] membersOfCluster,
        double[] cohesionOfCluster,
        int[] idOfCluster,
        GroupingOptions options,
        CancellationToken cancellationToken)
    {
        int n = rows.Rows;
        int d = rows.Dimensions;
        int k = clustering.GroupCount;
        int workers = options.MaxDegreeOfParallelism == -1 ? Environment.ProcessorCount : options.MaxDegreeOfParallelism;

        var sampleRandom = SplitMix64.ForStream(options.Seed, SampleStream);
        int[] sample = Silhouette.SampleRows(n, options.SilhouetteSampleSize, ref sampleRandom);
        SilhouetteSample? silhouettes = k > 1
            ? Silhouette.Compute(rows, clustering.Assignments, k, sample, workers, cancellationToken)
            : null;
        (double[] groupSilhouettes, int[] sampledMembers) = silhouettes?.GroupMeans() ?? ([double.NaN], [sample.Length]);

        double threshold = GroupCountSearchOptions.NoStructureThreshold(d);
        double overall = silhouettes?.Mean ?? double.NaN;
        var summary = new GroupingQuality(overall, sample.Length, overall < threshold, threshold);

        float[] centreCosines = new float[k * k];
        BlockScores.Compute(clustering.Centroids, clustering.Centroids, d, centreCosines);
        int[] nearest = new int[k];
        for (int a = 0; a < k; a++)
        {
            nearest[a] = -1;
            for (int b = 0; b < k; b++)
            {
                if (b != a && (nearest[a] < 0 || centreCosines[a * k + b] > centreCosines[a * k + nearest[a]]))
                {
                    nearest[a] = b;
                }
            }
        }

        // One buffer for every group's rows to split (a fresh 1.5 MB copy per group at 100k × 384, k = 100, set off
        // full collections of the large-object heap in a busy server).
        int largestGroup = membersOfCluster.Length == 0 ? 0 : membersOfCluster.Max(members => members.Length);
        float[] splitRows = new float[Math.Min(largestGroup, GroupQualityDefaults.SplitSampleSize) * d];
        var suggestions = new List<GroupSuggestion>[k];
        for (int a = 0; a < k; a++)
        {
            suggestions[a] = [];
            cancellationToken.ThrowIfCancellationRequested();
            if (SplitInTwo(rows, membersOfCluster[a], cohesionOfCluster[a], a, options, workers, cancellationToken, splitRows) is GroupSuggestion split)
            {
                suggestions[a].Add(split);
            }
        }

        if (silhouettes is not null)
        {
            for (int a = 0; a < k; a++)
            {
                int b = nearest[a];
                double pair = silhouettes.PairMean(a, b);
                if (!(pair < GroupQualityDefaults.CloseMaximumPairSilhouette))
                {
                    continue;
                }

                // Said on both groups of the pair, once each.
                foreach ((int self, int other) in new[] { (a, b), (b, a) })
                {
                    if (!suggestions[self].Any(s => s.Kind == SuggestionKind.CloseToGroup && s.OtherGroupId == idOfCluster[other]))
                    {
                        suggestions[self].Add(new GroupSuggestion
                        {
                            Kind = SuggestionKind.CloseToGroup,
                            Cohesion = cohesionOfCluster[self],
                            OtherGroupId = idOfCluster[other],
                            CentreSimilarity = centreCosines[self * k + other],
                            PairSilhouette = pair,
                        });
                    }
                }
            }
        }

        var perCluster = new GroupQuality[k];
        for (int a = 0; a < k; a++)
        {
            perCluster[a] = new GroupQuality
            {
                NearestGroupId = nearest[a] >= 0 ? idOfCluster[nearest[a]] : 0,
                NearestCentreSimilarity = nearest[a] >= 0 ? centreCosines[a * k + nearest[a]] : double.NaN,
                Silhouette = groupSilhouettes[a],
                SampledMembers = sampledMembers[a],
                Suggestions = suggestions[a].OrderBy(s => s.Kind).ThenBy(s => s.OtherGroupId).ToArray(),
            };
        }

        return (summary, perCluster);
    }

    /// <summary>
    /// The best two-way split of one group (spherical 2-means on its members, or on a seeded sample of
    /// <see cref="GroupQualityDefaults.SplitSampleSize"/> of them), returned as a suggestion when it passes all three
    /// tests of <see cref="GroupQualityDefaults"/>; null otherwise.
    /// </summary>
    /// <param name="scratch">Holds the copied rows when long enough (at least min(members, SplitSampleSize) × d); null: a fresh array.</param>
    internal static GroupSuggestion? SplitInTwo(
        EmbeddingMatrix rows,
        int[] members,
        double cohesion,
        int cluster,
        GroupingOptions options,
        int workers,
        CancellationToken cancellationToken,
        float[]? scratch = null)
    {
        if (members.Length < Math.Max(GroupQualityDefaults.SplitMinimumGroupSize, 4))
        {
            return null;
        }

        int d = rows.Dimensions;
        var random = SplitMix64.ForStream(options.Seed, SplitStreamBase - cluster);
        int[] picked = Silhouette.SampleRows(members.Length, GroupQualityDefaults.SplitSampleSize, ref random);
        int m = picked.Length;
        EmbeddingMatrix part = scratch is not null && scratch.Length >= m * d
            ? EmbeddingMatrix.OverPrefix(scratch, m, d)
            : EmbeddingMatrix.Allocate(m, d);
        double[] sum = new double[d];
        for (int r = 0; r < m; r++)
        {
            ReadOnlySpan<float> source = rows.Values.AsSpan(members[picked[r]] * d, d);
            source.CopyTo(part.Values.AsSpan(r * d, d));
            for (int p = 0; p < d; p++)
            {
                sum[p] += source[p];
            }
        }

        // The single-centre cohesion of exactly these rows: what the split is compared with.
        double baseCohesion = Math.Sqrt(System.Numerics.Tensors.TensorPrimitives.Dot<double>(sum, sum)) / m;
        ClusteringResult split = SphericalKMeans.Fit(
            part,
            new SphericalKMeansOptions
            {
                GroupCount = 2,
                Seed = options.Seed,
                RestartCount = SplitRestartCount,
                MaxIterations = SplitMaxIterations,
                ConvergenceTolerance = SplitConvergenceTolerance,
                MaxDegreeOfParallelism = options.MaxDegreeOfParallelism,
            },
            progress: null,
            cancellationToken);

        int[] all = Enumerable.Range(0, m).ToArray();
        double splitSilhouette = Silhouette.Compute(part, split.Assignments, 2, all, workers, cancellationToken).Mean;
        double spreadRemoved = baseCohesion < 1 ? (split.Objective - baseCohesion) / (1 - baseCohesion) : 0;
        int first = split.Assignments.Count(a => a == 0);
        double smallerShare = Math.Min(first, m - first) / (double)m;
        if (splitSilhouette < GroupQualityDefaults.SplitMinimumSilhouette
            || spreadRemoved < GroupQualityDefaults.SplitMinimumSpreadRemoved
            || smallerShare < GroupQualityDefaults.SplitMinimumPartShare)
        {
            return null;
        }

        int larger = (int)Math.Round(members.Length * (1 - smallerShare));
        return new GroupSuggestion
        {
            Kind = SuggestionKind.ProbablyTwoThemes,
            Cohesion = cohesion,
            PartSizes = [larger, members.Length - larger],
            SplitCohesion = split.Objective,
            SpreadRemoved = spreadRemoved,
            SplitSilhouette = splitSilhouette,
        };
    }
}
