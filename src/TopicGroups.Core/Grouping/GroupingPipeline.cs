using System.Diagnostics;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Terms;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Grouping;

/// <summary>Normalise, cluster, describe: the whole job on one validated batch.</summary>
public sealed class GroupingPipeline
{
    public GroupingResult Run(
        GroupingInput input,
        Action<GroupingProgress>? progress = null,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(input);
        var stopwatch = Stopwatch.StartNew();
        GroupingOptions options = input.Options;
        ValidateOptions(options);

        EmbeddingMatrix rows = input.Embeddings;
        RowNormalisation.NormaliseInPlace(rows);

        SphericalKMeansOptions clusteringOptions = options.ToClusteringOptions();
        GroupCountSearchResult? choice = null;
        if (options.GroupCount == GroupingDefaults.ChooseGroupCount)
        {
            choice = GroupCountSearch.Search(
                rows,
                options.ToSearchOptions(),
                progress is null ? null : c => progress(new GroupingProgress(GroupingStage.ChoosingGroupCount, 0, c.GroupCount, c.Silhouette)),
                cancellationToken);

            // The final run is exactly the one a fixed count would give. A warm start fits only the count it was made for.
            clusteringOptions = clusteringOptions with
            {
                GroupCount = choice.ChosenGroupCount,
                InitialCentroids = options.InitialCentroids?.Length == choice.ChosenGroupCount * rows.Dimensions ? options.InitialCentroids : null,
            };
        }

        Action<ClusteringProgress>? clusteringProgress = progress is null ? null : p => progress(new GroupingProgress(
            p.Stage == ClusteringStage.Seeding ? GroupingStage.Seeding : GroupingStage.Refining, p.Restart, p.Iteration, p.Objective));
        ClusteringResult clustering = SphericalKMeans.Fit(rows, clusteringOptions, clusteringProgress, cancellationToken);
        if (choice is not null && clusteringOptions.InitialCentroids is null)
        {
            // One more run from the chosen candidate's centres (after its split-merge moves), kept only when its
            // objective is higher: plain k-means++ restarts can merge small groups the search had separated, and the
            // grouping should be as good as the curve's point that chose it.
            ClusteringResult fromCandidate = SphericalKMeans.Fit(
                rows,
                clusteringOptions with { InitialCentroids = choice.ChosenCentroids, RestartCount = 1 },
                clusteringProgress,
                cancellationToken);
            if (fromCandidate.Objective > clustering.Objective)
            {
                clustering = fromCandidate;
            }
        }

        progress?.Invoke(new GroupingProgress(GroupingStage.Describing, clustering.KeptRestart, clustering.Iterations, clustering.Objective));
        cancellationToken.ThrowIfCancellationRequested();

        int k = clustering.GroupCount;
        int n = rows.Rows;
        int[] sizes = new int[k];
        foreach (int group in clustering.Assignments)
        {
            sizes[group]++;
        }

        // Ids by size, largest first; ties keep centroid order so runs repeat.
        int[] clusterByRank = Enumerable.Range(0, k).OrderByDescending(c => sizes[c]).ThenBy(c => c).ToArray();
        int[] idOfCluster = new int[k];
        for (int rank = 0; rank < k; rank++)
        {
            idOfCluster[clusterByRank[rank]] = rank + 1;
        }

        int[][] membersOfCluster = MembersByCluster(clustering.Assignments, sizes);
        bool[] isOutlier = FlagOutliers(clustering.Similarities, membersOfCluster, options);

        IReadOnlyList<WeightedTerm>[] terms = GroupTerms.TopTermsPerGroup(
            input.Texts,
            clustering.Assignments,
            k,
            new GroupTermsOptions { TermCount = options.TermCount, IncludeBigrams = options.IncludeBigrams },
            cancellationToken);

        double[] cohesionOfCluster = new double[k];
        for (int cluster = 0; cluster < k; cluster++)
        {
            double sum = 0;
            foreach (int member in membersOfCluster[cluster])
            {
                sum += clustering.Similarities[member];
            }

            cohesionOfCluster[cluster] = sum / membersOfCluster[cluster].Length;
        }

        (GroupingQuality quality, GroupQuality[] qualityOfCluster) = QualityAssessment.Assess(
            rows, clustering, membersOfCluster, cohesionOfCluster, idOfCluster, options, cancellationToken);

        var groups = new GroupSummary[k];
        for (int rank = 0; rank < k; rank++)
        {
            int cluster = clusterByRank[rank];
            int[] members = membersOfCluster[cluster];
            int outliers = 0;
            foreach (int member in members)
            {
                outliers += isOutlier[member] ? 1 : 0;
            }

            GroupExample[] examples = members
                .OrderByDescending(m => clustering.Similarities[m])
                .ThenBy(m => m)
                .Take(options.ExampleCount)
                .Select(m => new GroupExample(m, input.Ids[m], input.Texts[m], clustering.Similarities[m]))
                .ToArray();

            groups[rank] = new GroupSummary(rank + 1, members.Length, cohesionOfCluster[cluster], terms[cluster], examples, outliers)
            {
                Quality = qualityOfCluster[cluster],
            };
        }

        var documents = new DocumentPlacement[n];
        for (int i = 0; i < n; i++)
        {
            int own = clustering.Assignments[i];
            int runnerUp = clustering.RunnerUpGroups[i];
            bool hasRunnerUp = k > 1;
            documents[i] = new DocumentPlacement(
                input.Ids[i],
                idOfCluster[own],
                clustering.Similarities[i],
                hasRunnerUp ? clustering.Similarities[i] - clustering.RunnerUpSimilarities[i] : 0f,
                hasRunnerUp ? idOfCluster[runnerUp] : 0,
                isOutlier[i])
            {
                RunnerUpSimilarity = hasRunnerUp ? clustering.RunnerUpSimilarities[i] : 0f,
            };
        }

        float[] centroids = new float[k * rows.Dimensions];
        for (int rank = 0; rank < k; rank++)
        {
            Array.Copy(clustering.Centroids, clusterByRank[rank] * rows.Dimensions, centroids, rank * rows.Dimensions, rows.Dimensions);
        }

        DocumentMap? map = options.IncludeMap
            ? DocumentMap.Build(rows, documents.Select(d => d.GroupId - 1).ToArray(), k, options.MapSampleSize, options.Seed, options.MaxDegreeOfParallelism, cancellationToken)
            : null;

        var statistics = new RunStatistics(
            clustering.Objective,
            clustering.Iterations,
            clustering.Converged,
            stopwatch.Elapsed,
            clustering.SeedingTime,
            clustering.RestartCount,
            n,
            rows.Dimensions);
        return new GroupingResult(groups, documents, statistics, centroids)
        {
            GroupCountChoice = choice,
            Quality = quality,
            Map = map,
        };
    }

    private static void ValidateOptions(GroupingOptions options)
    {
        if (options.TermCount < 0)
        {
            throw new ArgumentException($"TermCount is {options.TermCount}; it must be zero or more.", nameof(options));
        }

        if (options.ExampleCount < 0)
        {
            throw new ArgumentException($"ExampleCount is {options.ExampleCount}; it must be zero or more.", nameof(options));
        }

        if (options.SilhouetteSampleSize < 2)
        {
            throw new ArgumentException(
                $"SilhouetteSampleSize is {options.SilhouetteSampleSize}; it must be at least 2.", nameof(options));
        }

        if (!(options.OutlierScoreThreshold > 0))
        {
            throw new ArgumentException(
                $"OutlierScoreThreshold is {options.OutlierScoreThreshold}; it must be positive.", nameof(options));
        }
    }

    private static int[][] MembersByCluster(int[] assignments, int[] sizes)
    {
        var members = new int[sizes.Length][];
        var filled = new int[sizes.Length];
        for (int c = 0; c < sizes.Length; c++)
        {
            members[c] = new int[sizes[c]];
        }

        for (int i = 0; i < assignments.Length; i++)
        {
            int c = assignments[i];
            members[c][filled[c]++] = i;
        }

        return members;
    }

    private static bool[] FlagOutliers(float[] similarities, int[][] membersOfCluster, GroupingOptions options)
    {
        var isOutlier = new bool[similarities.Length];
        foreach (int[] members in membersOfCluster)
        {
            float[] memberSimilarities = new float[members.Length];
            for (int m = 0; m < members.Length; m++)
            {
                memberSimilarities[m] = similarities[members[m]];
            }

            bool[] flags = new bool[members.Length];
            OutlierRule.Flag(memberSimilarities, options.OutlierScoreThreshold, options.OutlierMinimumGroupSize, flags);
            for (int m = 0; m < members.Length; m++)
            {
                isOutlier[members[m]] = flags[m];
            }
        }

        return isOutlier;
    }
}
