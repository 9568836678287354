using System.Diagnostics;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// Chooses the number of groups: clusters each candidate count with spherical k-means and scores it by the
/// mean cosine silhouette (Rousseeuw, 1987) of a seeded sample, then takes the best count, preferring fewer
/// groups on a near-tie. The whole curve is returned so that a person can overrule the choice.
/// </summary>
/// <remarks>
/// Fit quality, so that each point of the curve is the silhouette of a good grouping at that count: each candidate
/// is one k-means++ run followed by split-merge moves (<see cref="SplitMergeRefinement"/>), which fix what k-means++
/// gets wrong on uneven groups (a large group split in two, small groups merged); without them high counts were
/// under-scored and the curve peaked far too low (docs/algorithms.md §8).
/// <para>Cost control, so that choosing costs a small multiple of one grouping:</para>
/// <list type="bullet">
/// <item>Candidates are clustered on a seeded subset of at most <see cref="GroupCountSearchOptions.CandidateRowLimit"/>
/// rows, with one restart, at most 20 iterations and at most 16 moves of at most 8 iterations each. The caller then
/// runs the full grouping once at the chosen count, starting one restart from the chosen candidate's centres.</item>
/// <item>The range is searched coarse-to-fine: <see cref="GroupCountSearchDefaults.CoarsePoints"/> geometrically
/// spaced counts first, each from its own k-means++ seeds; then repeated bisection of the gaps on both sides of the
/// current choice and of the current best, until both have tried neighbours on each side. Refinement candidates
/// start from the nearest tried count's centres (split along principal directions or with the least useful centres
/// removed), so they rarely need a move. A range of 2–40 costs about 12–18 candidates, not 39.</item>
/// <item>Each silhouette costs O(n d + m k d) (see <see cref="Silhouette"/>), small next to clustering.</item>
/// </list>
/// Choice rule: let s* be the highest mean silhouette tried; the chosen count is the smallest tried count whose
/// silhouette is at least s* − one standard error of s* (the sampled silhouettes' standard deviation over √m; the
/// one-standard-error rule of Breiman et al., 1984, and Hastie, Tibshirani &amp; Friedman, 2009, §7.10), or
/// s* − TieTolerance when the caller fixes one. When s* is below the no-structure threshold the reason says so, the
/// refinement stops after the coarse grid and the smallest count of the range is returned.
/// </remarks>
public static class GroupCountSearch
{
    // Generator streams of the search, far from the restart streams 0, 1, 2, ... of the candidate fits.
    private const int CandidateRowsStream = int.MaxValue;
    private const int SampleStream = int.MaxValue - 1;

    /// <summary>Searches the options' range (or the default range for the row count) on unit rows.</summary>
    /// <param name="candidateScored">Called after each candidate, in the order they are tried.</param>
    /// <exception cref="ArgumentException">An option or the range is out of bounds; the message names it.</exception>
    /// <exception cref="OperationCanceledException">The token was cancelled (checked between and inside candidates).</exception>
    public static GroupCountSearchResult Search(
        EmbeddingMatrix unitRows,
        GroupCountSearchOptions options,
        Action<GroupCountCandidate>? candidateScored = null,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(unitRows);
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        (int minimum, int maximum) = options.ResolveRange(unitRows.Rows);
        long start = Stopwatch.GetTimestamp();
        int workers = options.ResolveWorkerCount();

        EmbeddingMatrix candidateRows = CandidateRows(unitRows, options.CandidateRowLimit, options.Seed);
        var sampleRandom = SplitMix64.ForStream(options.Seed, SampleStream);
        int[] sample = Silhouette.SampleRows(candidateRows.Rows, options.SilhouetteSampleSize, ref sampleRandom);

        var tried = new SortedDictionary<int, GroupCountCandidate>();
        var fits = new Dictionary<int, ClusteringResult>();
        void Try(int k, bool warmStart)
        {
            if (tried.ContainsKey(k))
            {
                return;
            }

            cancellationToken.ThrowIfCancellationRequested();
            ClusteringResult? neighbour = warmStart ? fits[NearestTried(tried, k)] : null;
            (GroupCountCandidate candidate, ClusteringResult fit) = Score(candidateRows, k, neighbour, sample, options, workers, cancellationToken);
            tried.Add(k, candidate);
            fits.Add(k, fit);
            candidateScored?.Invoke(candidate);
        }

        foreach (int k in CoarseGrid(minimum, maximum, GroupCountSearchDefaults.CoarsePoints))
        {
            Try(k, warmStart: false);
        }

        // Without structure every count is an arbitrary cut: no refinement, and the fewest groups are returned.
        double threshold = GroupCountSearchOptions.NoStructureThreshold(unitRows.Dimensions);
        while (true)
        {
            (int chosen, int best, double bestSoFar) = Choose(tried.Values, options.TieTolerance);
            if (bestSoFar < threshold)
            {
                break;
            }

            int[] next = [.. Midpoints(tried.Keys, chosen), .. Midpoints(tried.Keys, best)];
            next = next.Distinct().Where(k => !tried.ContainsKey(k)).Order().ToArray();
            if (next.Length == 0)
            {
                break;
            }

            foreach (int k in next)
            {
                Try(k, warmStart: true);
            }
        }

        (int chosenCount, int bestCount, double bestSilhouette) = Choose(tried.Values, options.TieTolerance);
        double tolerance = options.TieTolerance ?? tried[bestCount].SilhouetteStandardError;
        bool noStructure = bestSilhouette < threshold;
        if (noStructure)
        {
            chosenCount = minimum;
        }

        GroupCountChoiceReason reason = noStructure ? GroupCountChoiceReason.NoStructure
            : chosenCount == bestCount ? GroupCountChoiceReason.HighestSilhouette
            : GroupCountChoiceReason.NearTieFewerGroups;

        return new GroupCountSearchResult
        {
            MinimumGroupCount = minimum,
            MaximumGroupCount = maximum,
            Curve = tried.Values.ToArray(),
            ChosenGroupCount = chosenCount,
            ChosenCentroids = fits[chosenCount].Centroids,
            BestGroupCount = bestCount,
            BestSilhouette = bestSilhouette,
            Reason = reason,
            NoStructureThreshold = threshold,
            TieTolerance = tolerance,
            TieToleranceIsStandardError = options.TieTolerance is null,
            CandidateRows = candidateRows.Rows,
            SampleSize = sample.Length,
            Elapsed = Stopwatch.GetElapsedTime(start),
        };
    }

    /// <summary>
    /// The rule: the best is the highest silhouette (the lower count on an exact tie); the chosen count is the
    /// smallest whose silhouette is at least best − tolerance, where tolerance null means one standard error of the
    /// best count's sampled mean silhouette (the one-standard-error rule). Candidates may come in any order.
    /// </summary>
    internal static (int Chosen, int Best, double BestSilhouette) Choose(IEnumerable<GroupCountCandidate> candidates, double? tolerance)
    {
        GroupCountCandidate[] ordered = candidates.OrderBy(c => c.GroupCount).ToArray();
        if (ordered.Length == 0)
        {
            throw new ArgumentException("No candidate was scored.", nameof(candidates));
        }

        GroupCountCandidate best = ordered[0];
        foreach (GroupCountCandidate candidate in ordered)
        {
            if (candidate.Silhouette > best.Silhouette)
            {
                best = candidate;
            }
        }

        double margin = tolerance ?? best.SilhouetteStandardError;
        GroupCountCandidate chosen = ordered.First(c => c.Silhouette >= best.Silhouette - margin);
        return (chosen.GroupCount, best.GroupCount, best.Silhouette);
    }

    /// <summary>The tried count nearest to <paramref name="k"/>; on equal distance the one with the higher silhouette.</summary>
    private static int NearestTried(SortedDictionary<int, GroupCountCandidate> tried, int k) =>
        tried.Values.OrderBy(c => Math.Abs(c.GroupCount - k)).ThenByDescending(c => c.Silhouette).ThenBy(c => c.GroupCount).First().GroupCount;

    /// <summary>
    /// About <paramref name="points"/> counts from minimum to maximum (both included), spaced geometrically
    /// because the silhouette changes faster between 2 and 5 groups than between 30 and 33; every count when the
    /// range is short.
    /// </summary>
    internal static int[] CoarseGrid(int minimum, int maximum, int points)
    {
        if (maximum - minimum + 1 <= points + 2)
        {
            return Enumerable.Range(minimum, maximum - minimum + 1).ToArray();
        }

        var grid = new SortedSet<int> { minimum, maximum };
        double ratio = Math.Pow((double)maximum / minimum, 1.0 / (points - 1));
        for (int i = 1; i < points - 1; i++)
        {
            grid.Add((int)Math.Round(minimum * Math.Pow(ratio, i)));
        }

        return grid.ToArray();
    }

    /// <summary>The midpoints of the untried gaps just below and just above <paramref name="around"/> among the tried counts.</summary>
    private static IEnumerable<int> Midpoints(IEnumerable<int> triedCounts, int around)
    {
        int below = int.MinValue;
        int above = int.MaxValue;
        foreach (int k in triedCounts)
        {
            if (k < around)
            {
                below = Math.Max(below, k);
            }
            else if (k > around)
            {
                above = Math.Min(above, k);
            }
        }

        if (below != int.MinValue && around - below > 1)
        {
            yield return below + (around - below) / 2;
        }

        if (above != int.MaxValue && above - around > 1)
        {
            yield return around + (above - around + 1) / 2;
        }
    }

    /// <summary>
    /// Clusters the candidate rows into k groups (k-means++ seeds, or a warm start resized from a neighbouring
    /// count's fit), applies the split-merge moves, and scores the result by the sampled mean silhouette.
    /// </summary>
    private static (GroupCountCandidate Candidate, ClusteringResult Fit) Score(
        EmbeddingMatrix rows,
        int k,
        ClusteringResult? neighbour,
        int[] sample,
        GroupCountSearchOptions options,
        int workers,
        CancellationToken cancellationToken)
    {
        long start = Stopwatch.GetTimestamp();
        var fitOptions = new SphericalKMeansOptions
        {
            GroupCount = k,
            Seed = options.Seed,
            RestartCount = options.CandidateRestartCount,
            MaxIterations = options.CandidateMaxIterations,
            ConvergenceTolerance = options.CandidateConvergenceTolerance,
            MaxDegreeOfParallelism = options.MaxDegreeOfParallelism,
        };
        float[]? warm = neighbour is null ? null : SplitMergeRefinement.Resize(rows, neighbour, k, options.MaxDegreeOfParallelism, cancellationToken);
        ClusteringResult fit = SphericalKMeans.Fit(
            rows, warm is null ? fitOptions : fitOptions with { InitialCentroids = warm, RestartCount = 1 }, progress: null, cancellationToken);
        fit = SplitMergeRefinement.Refine(
            rows, fit, fitOptions, options.CandidateMoveLimit, options.CandidateMoveAttempts, out int moves, cancellationToken);
        SilhouetteSample silhouettes = Silhouette.Compute(rows, fit.Assignments, k, sample, workers, cancellationToken);
        var candidate = new GroupCountCandidate(k, silhouettes.Mean, fit.Objective, Stopwatch.GetElapsedTime(start))
        {
            Moves = moves,
            WarmStarted = warm is not null,
            SilhouetteStandardError = StandardError(silhouettes.Values),
        };
        return (candidate, fit);
    }

    /// <summary>Standard deviation of the sampled silhouettes over √m: the standard error of their mean.</summary>
    private static double StandardError(double[] values)
    {
        if (values.Length < 2)
        {
            return 0;
        }

        double mean = values.Average();
        double sumOfSquares = 0;
        foreach (double value in values)
        {
            sumOfSquares += (value - mean) * (value - mean);
        }

        return Math.Sqrt(sumOfSquares / (values.Length - 1) / values.Length);
    }

    /// <summary>
    /// All rows when there are at most <paramref name="limit"/>; otherwise a copy of a seeded uniform subset of
    /// that many rows (in their original order): the only extra copy of embeddings, bounded by the limit.
    /// </summary>
    private static EmbeddingMatrix CandidateRows(EmbeddingMatrix unitRows, int limit, ulong seed)
    {
        if (unitRows.Rows <= limit)
        {
            return unitRows;
        }

        var random = SplitMix64.ForStream(seed, CandidateRowsStream);
        int[] chosen = Silhouette.SampleRows(unitRows.Rows, limit, ref random);
        int d = unitRows.Dimensions;
        var subset = EmbeddingMatrix.Allocate(limit, d);
        for (int r = 0; r < chosen.Length; r++)
        {
            unitRows.Values.AsSpan(chosen[r] * d, d).CopyTo(subset.Values.AsSpan(r * d, d));
        }

        return subset;
    }
}
