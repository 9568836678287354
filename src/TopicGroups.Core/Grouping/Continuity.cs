using TopicGroups.Core.Clustering;
using TopicGroups.Core.Terms;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Grouping;

public static class ContinuityDefaults
{
    /// <summary>
    /// Centre cosine a new group needs with a reference group to continue it. Measured on the demo tickets
    /// (MiniLM, 384 dimensions) split into halves of about 340 and grouped separately: of the Hungarian pairs at
    /// or above 0.7, 53 of 66 shared their majority theme; of those below, 2 of 12 (docs/saved-groupings.md).
    /// Models whose unrelated themes sit further apart, and bigger batches, allow a higher value.
    /// </summary>
    public const double MinimumMatchSimilarity = 0.7;
}

public enum ThemeChangeKind
{
    /// <summary>Matched to a reference group: keeps its id.</summary>
    Continued,

    /// <summary>No reference group is similar enough: a fresh id above the reference's highest.</summary>
    New,

    /// <summary>A reference group that no new group continues.</summary>
    Faded,
}

/// <summary>What happened to one theme between the reference grouping and the new one.</summary>
/// <param name="GroupId">The theme's id: the reference's for continued and faded themes, a fresh one for new themes.</param>
/// <param name="SizeThen">Members in the reference batch (0 for a new theme).</param>
/// <param name="SizeNow">Members in the new batch (0 for a faded theme).</param>
/// <param name="CentreSimilarity">
/// Continued: cosine of the two centres. New: cosine to the most similar reference centre; faded: to the most
/// similar new centre (both below the minimum, or that centre was matched to a closer one). 0 when the other side is empty.
/// </param>
/// <param name="ClosestGroupId">New and faded themes: the id of that most similar theme on the other side; 0 for continued themes.</param>
/// <param name="Terms">Top terms now (the reference's for a faded theme).</param>
/// <param name="TermsRose">Continued: terms in the top terms now that were not among them in the reference.</param>
/// <param name="TermsFell">Continued: terms among the reference's top terms that are not among them now.</param>
public sealed record ThemeChange(
    int GroupId,
    ThemeChangeKind Kind,
    int SizeThen,
    int SizeNow,
    double CentreSimilarity,
    int ClosestGroupId,
    IReadOnlyList<string> Terms,
    IReadOnlyList<string> TermsRose,
    IReadOnlyList<string> TermsFell);

/// <summary>
/// The themes of a grouping compared with a reference: continued themes first (largest now first), then new,
/// then faded (largest then first).
/// </summary>
public sealed record ChangeReport(
    IReadOnlyList<ThemeChange> Themes,
    int ReferenceDocumentCount,
    int DocumentCount,
    double MinimumMatchSimilarity);

public sealed record ContinuityResult(GroupingResult Result, ChangeReport Changes, int HighestGroupId);

/// <summary>
/// Keeps theme ids stable across groupings. k-means numbers its groups arbitrarily, so a new grouping is
/// matched to a reference by the Hungarian method (Kuhn, 1955) on centre cosine: the pairing with the largest
/// total cosine among pairs at or above a minimum similarity. Matched groups take the reference's ids; the
/// others are new and get ids above the highest the reference's line has used; reference groups left
/// unmatched have faded.
/// </summary>
public static class Continuity
{
    /// <summary>Relabels <paramref name="current"/> with the reference's ids and reports what changed.</summary>
    /// <param name="current">A pipeline result: Groups[i]'s centre is row i of Centroids.</param>
    /// <param name="reference">The saved grouping to continue.</param>
    /// <param name="minimumMatchSimilarity">Centre cosine needed to continue a theme, in (0, 1].</param>
    /// <exception cref="ArgumentException">Dimensions differ, or the minimum is outside (0, 1].</exception>
    public static ContinuityResult Apply(GroupingResult current, GroupingSnapshot reference, double minimumMatchSimilarity)
    {
        ArgumentNullException.ThrowIfNull(current);
        ArgumentNullException.ThrowIfNull(reference);
        if (!(minimumMatchSimilarity > 0 && minimumMatchSimilarity <= 1))
        {
            throw new ArgumentException(
                $"minimumMatchSimilarity is {minimumMatchSimilarity}; it must be above 0 and at most 1.", nameof(minimumMatchSimilarity));
        }

        int d = current.Statistics.Dimensions;
        if (reference.Dimensions != d)
        {
            throw new ArgumentException(
                $"The batch has {d} dimensions but the reference grouping was made from {reference.Dimensions}; use embeddings from the same model.",
                nameof(reference));
        }

        int k = current.Groups.Count;
        int kr = reference.Groups.Count;

        // cosines: k × kr, row-major; cosines[i * kr + j] = cos(new centre i, reference centre j), both unit length.
        float[] cosines = new float[k * kr];
        if (k > 0 && kr > 0)
        {
            BlockScores.Compute(current.Centroids, reference.Centroids, d, cosines);
        }

        // Pairs below the minimum weigh 0, the same as no pair, so the optimum is the best matching among allowed pairs.
        double[] weights = new double[k * kr];
        for (int i = 0; i < weights.Length; i++)
        {
            weights[i] = cosines[i] >= minimumMatchSimilarity ? cosines[i] : 0;
        }

        int[] referenceOfNew = HungarianMatching.Maximise(weights, k, kr);
        int[] newOfReference = new int[kr];
        Array.Fill(newOfReference, -1);
        for (int i = 0; i < k; i++)
        {
            if (referenceOfNew[i] >= 0 && cosines[i * kr + referenceOfNew[i]] >= minimumMatchSimilarity)
            {
                newOfReference[referenceOfNew[i]] = i;
            }
            else
            {
                referenceOfNew[i] = -1;
            }
        }

        // Ids: matched groups take the reference's; new ones count up from the reference's highest, in size order.
        int[] idOfNew = new int[k];
        int nextId = reference.HighestGroupId;
        for (int i = 0; i < k; i++)
        {
            idOfNew[i] = referenceOfNew[i] >= 0 ? reference.Groups[referenceOfNew[i]].Id : ++nextId;
        }

        GroupingResult relabelled = Relabel(current, idOfNew);
        var themes = new List<ThemeChange>(k + kr);
        var continued = new List<ThemeChange>();
        var fresh = new List<ThemeChange>();
        for (int i = 0; i < k; i++)
        {
            GroupSummary now = current.Groups[i];
            IReadOnlyList<string> termsNow = TermNames(now.Terms);
            int j = referenceOfNew[i];
            if (j >= 0)
            {
                SnapshotGroup then = reference.Groups[j];
                IReadOnlyList<string> termsThen = TermNames(then.Terms);
                continued.Add(new ThemeChange(
                    idOfNew[i], ThemeChangeKind.Continued, then.Size, now.Size, cosines[i * kr + j], 0,
                    termsNow, termsNow.Except(termsThen).ToArray(), termsThen.Except(termsNow).ToArray()));
            }
            else
            {
                (int closest, float similarity) = Closest(cosines.AsSpan(i * kr, kr));
                fresh.Add(new ThemeChange(
                    idOfNew[i], ThemeChangeKind.New, 0, now.Size, similarity, closest >= 0 ? reference.Groups[closest].Id : 0,
                    termsNow, [], []));
            }
        }

        var faded = new List<ThemeChange>();
        float[] column = new float[k];
        for (int j = 0; j < kr; j++)
        {
            if (newOfReference[j] >= 0)
            {
                continue;
            }

            for (int i = 0; i < k; i++)
            {
                column[i] = cosines[i * kr + j];
            }

            (int closest, float similarity) = Closest(column);
            SnapshotGroup then = reference.Groups[j];
            faded.Add(new ThemeChange(
                then.Id, ThemeChangeKind.Faded, then.Size, 0, similarity, closest >= 0 ? idOfNew[closest] : 0,
                TermNames(then.Terms), [], []));
        }

        themes.AddRange(continued.OrderByDescending(t => t.SizeNow).ThenBy(t => t.GroupId));
        themes.AddRange(fresh.OrderByDescending(t => t.SizeNow).ThenBy(t => t.GroupId));
        themes.AddRange(faded.OrderByDescending(t => t.SizeThen).ThenBy(t => t.GroupId));
        var report = new ChangeReport(themes, reference.DocumentCount, current.Statistics.DocumentCount, minimumMatchSimilarity);
        return new ContinuityResult(relabelled, report, Math.Max(nextId, reference.HighestGroupId));
    }

    /// <summary>The same result with group ids replaced: idOfPosition[i] is the new id of Groups[i].</summary>
    private static GroupingResult Relabel(GroupingResult current, int[] idOfPosition)
    {
        var idMap = new Dictionary<int, int>(idOfPosition.Length);
        var groups = new GroupSummary[current.Groups.Count];
        for (int i = 0; i < groups.Length; i++)
        {
            idMap.Add(current.Groups[i].Id, idOfPosition[i]);
        }

        // Ids also appear inside the quality figures (the nearest group, suggestions naming another group).
        int Map(int id) => id == 0 ? 0 : idMap[id];
        for (int i = 0; i < groups.Length; i++)
        {
            GroupSummary group = current.Groups[i];
            GroupQuality? quality = group.Quality is null ? null : group.Quality with
            {
                NearestGroupId = Map(group.Quality.NearestGroupId),
                Suggestions = group.Quality.Suggestions.Select(s => s with { OtherGroupId = Map(s.OtherGroupId) }).ToArray(),
            };
            groups[i] = group with { Id = idOfPosition[i], Quality = quality };
        }

        var documents = new DocumentPlacement[current.Documents.Count];
        for (int i = 0; i < documents.Length; i++)
        {
            DocumentPlacement placement = current.Documents[i];
            documents[i] = placement with
            {
                GroupId = idMap[placement.GroupId],
                RunnerUpGroupId = placement.RunnerUpGroupId == 0 ? 0 : idMap[placement.RunnerUpGroupId],
            };
        }

        return current with { Groups = groups, Documents = documents };
    }

    private static (int Index, float Similarity) Closest(ReadOnlySpan<float> cosines)
    {
        int best = -1;
        float bestCosine = 0f;
        for (int j = 0; j < cosines.Length; j++)
        {
            if (best < 0 || cosines[j] > bestCosine)
            {
                (best, bestCosine) = (j, cosines[j]);
            }
        }

        return (best, bestCosine);
    }

    private static string[] TermNames(IReadOnlyList<WeightedTerm> terms) => terms.Select(t => t.Term).ToArray();
}
