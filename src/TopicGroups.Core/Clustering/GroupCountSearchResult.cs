namespace TopicGroups.Core.Clustering;

/// <summary>One point of the curve: a candidate count, its mean silhouette on the sample and its objective.</summary>
/// <param name="Silhouette">Mean cosine silhouette of the sampled rows (Rousseeuw, 1987), in [−1, 1]; higher is better.</param>
/// <param name="Objective">Mean cosine of each candidate row to its centre; it rises with the count, so it is shown, not used to choose.</param>
/// <param name="Elapsed">Clustering plus scoring time of this candidate.</param>
public readonly record struct GroupCountCandidate(int GroupCount, double Silhouette, double Objective, TimeSpan Elapsed)
{
    /// <summary>Split-merge moves kept after the candidate's k-means run (see GroupCountSearchOptions.CandidateMoveLimit).</summary>
    public int Moves { get; init; }

    /// <summary>True when the fit started from a neighbouring count's centres (resized) instead of k-means++ seeds.</summary>
    public bool WarmStarted { get; init; }

    /// <summary>Standard deviation of the sampled silhouettes over √(sample size); the near-tie margin by default.</summary>
    public double SilhouetteStandardError { get; init; }
}

/// <summary>Why a count was chosen.</summary>
public enum GroupCountChoiceReason
{
    /// <summary>The chosen count has the highest mean silhouette of the counts tried.</summary>
    HighestSilhouette,

    /// <summary>A smaller count within the tie tolerance of the highest was preferred.</summary>
    NearTieFewerGroups,

    /// <summary>Even the highest mean silhouette is below the no-structure threshold: the batch shows no groups.</summary>
    NoStructure,
}

/// <summary>The curve a count was chosen from, the choice and its reason.</summary>
public sealed record GroupCountSearchResult
{
    /// <summary>The range searched (inclusive).</summary>
    public required int MinimumGroupCount { get; init; }

    public required int MaximumGroupCount { get; init; }

    /// <summary>Every count tried, in ascending order of count (a coarse grid plus the refinements; not always every count of the range).</summary>
    public required IReadOnlyList<GroupCountCandidate> Curve { get; init; }

    public required int ChosenGroupCount { get; init; }

    /// <summary>The chosen candidate's centres (k × d, unit rows): the final grouping starts one run from them.</summary>
    internal float[] ChosenCentroids { get; init; } = [];

    /// <summary>The count with the highest mean silhouette, and that silhouette.</summary>
    public required int BestGroupCount { get; init; }

    public required double BestSilhouette { get; init; }

    public required GroupCountChoiceReason Reason { get; init; }

    /// <summary>True when the best mean silhouette is below <see cref="NoStructureThreshold"/>.</summary>
    public bool NoStructure => Reason == GroupCountChoiceReason.NoStructure;

    /// <summary>max(0.05, 3 / d), at most 0.5; see <see cref="GroupCountSearchOptions.NoStructureThreshold"/>.</summary>
    public required double NoStructureThreshold { get; init; }

    public required double TieTolerance { get; init; }

    /// <summary>True when <see cref="TieTolerance"/> is one standard error of the best count's sampled mean silhouette (the default), not a fixed value.</summary>
    public bool TieToleranceIsStandardError { get; init; }

    /// <summary>Rows the candidates were clustered on, and rows whose silhouettes were averaged.</summary>
    public required int CandidateRows { get; init; }

    public required int SampleSize { get; init; }

    public required TimeSpan Elapsed { get; init; }

    /// <summary>One plain-language sentence with the numbers behind the choice.</summary>
    public string Explanation
    {
        get
        {
            var culture = System.Globalization.CultureInfo.InvariantCulture;
            GroupCountCandidate chosen = Curve.First(c => c.GroupCount == ChosenGroupCount);
            string tried = string.Create(culture, $"{Curve.Count} counts tried from {MinimumGroupCount} to {MaximumGroupCount}");
            return Reason switch
            {
                GroupCountChoiceReason.NoStructure => string.Create(culture,
                    $"No clear structure: the highest mean silhouette is {BestSilhouette:F3} (at {BestGroupCount} groups), below {NoStructureThreshold:F3}; "
                    + $"the {ChosenGroupCount} groups are arbitrary cuts of one spread of documents, not themes ({tried})."),
                GroupCountChoiceReason.NearTieFewerGroups => string.Create(culture,
                    $"{ChosenGroupCount} groups: mean silhouette {chosen.Silhouette:F3}, within {TieTolerance:0.####}{(TieToleranceIsStandardError ? " (one standard error)" : "")} of the highest "
                    + $"({BestSilhouette:F3} at {BestGroupCount} groups); near-ties go to fewer groups ({tried})."),
                _ => string.Create(culture,
                    $"{ChosenGroupCount} groups: the highest mean silhouette, {chosen.Silhouette:F3} ({tried})."),
            };
        }
    }
}
