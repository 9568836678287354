using TopicGroups.Core.Clustering;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Grouping;

/// <summary>
/// A 2-D picture of a batch: each unit vector, and each group centre, projected onto the first two
/// principal components of the documents' unit vectors (<see cref="PrincipalComponents"/>). Near on the map
/// does not always mean near in the full space (two axes keep only part of the variance; see the shares), but
/// far on the map does mean far apart: a projection never lengthens a distance.
/// </summary>
public sealed record DocumentMap(
    float[] Coordinates,    // n × 2, row-major: document i at (Coordinates[2i], Coordinates[2i + 1])
    float[] GroupCentres,   // k × 2: the group with id g at (GroupCentres[2(g − 1)], GroupCentres[2(g − 1) + 1])
    double XVarianceShare,
    double YVarianceShare,
    int FittedDocumentCount)
{
    /// <summary>Documents the principal components are fitted on; larger batches are sampled (seeded) and all documents projected.</summary>
    public const int DefaultSampleSize = PrincipalComponentsDefaults.SampleSize;

    /// <summary>Fits the axes on the unit rows, then places every row and every centre (k × d, row-major, by group id).</summary>
    internal static DocumentMap Build(
        EmbeddingMatrix unitRows,
        float[] centresByGroupId,
        int sampleSize,
        ulong seed,
        int maxDegreeOfParallelism,
        CancellationToken cancellationToken)
    {
        int n = unitRows.Rows;
        int d = unitRows.Dimensions;
        PrincipalComponentsResult axes = PrincipalComponents.Fit(
            unitRows,
            new PrincipalComponentsOptions { ComponentCount = 2, SampleSize = sampleSize, Seed = seed, MaxDegreeOfParallelism = maxDegreeOfParallelism },
            cancellationToken);

        // With one dimension there is one component: every point then has y = 0.
        float[] coordinates = new float[n * 2];
        int workers = maxDegreeOfParallelism == -1 ? Environment.ProcessorCount : maxDegreeOfParallelism;
        var blocks = new RowBlocks(n, workers);
        blocks.ForEachBlock((block, _) =>
        {
            int end = blocks.Start(block) + blocks.Length(block);
            for (int i = blocks.Start(block); i < end; i++)
            {
                axes.Project(unitRows.Row(i), coordinates.AsSpan(i * 2, axes.ComponentCount));
            }
        });

        int k = centresByGroupId.Length / d;
        float[] centres = new float[k * 2];
        for (int g = 0; g < k; g++)
        {
            axes.Project(centresByGroupId.AsSpan(g * d, d), centres.AsSpan(g * 2, axes.ComponentCount));
        }

        return new DocumentMap(
            coordinates,
            centres,
            axes.VarianceShare(0),
            axes.ComponentCount > 1 ? axes.VarianceShare(1) : 0,
            axes.FittedRowCount);
    }
}
