using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// Spherical k-means (Dhillon &amp; Modha, 2001) on unit-length rows: assignment is the argmax of
/// cosine, each centroid is the normalised mean of its members.
/// </summary>
public static class SphericalKMeans
{
    /// <summary>Clusters unit-length rows. The rows must already be normalised (see RowNormalisation).</summary>
    public static ClusteringResult Fit(
        EmbeddingMatrix unitRows,
        SphericalKMeansOptions options,
        Action<ClusteringProgress>? progress = null,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(unitRows);
        ArgumentNullException.ThrowIfNull(options);
        options.Validate(unitRows.Rows);
        throw new NotImplementedException("REVIEW: being written (clustering helper).");
    }
}
