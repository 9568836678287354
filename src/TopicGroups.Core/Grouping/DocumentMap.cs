using TopicGroups.Core.Clustering;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Grouping;

/// <summary>
/// A 2-D picture of a batch: each unit vector projected onto the first two principal components of the documents'
/// unit vectors (<see cref="PrincipalComponents"/>), and each group at the mean position of its documents. Near on
/// the map does not always mean near in the full space (two axes keep only part of the variance; see the shares),
/// but far on the map does mean far apart: a projection never lengthens a distance.
/// </summary>
public sealed record DocumentMap(
    float[] Coordinates,    // n × 2, row-major: document i at (Coordinates[2i], Coordinates[2i + 1])
    float[] GroupCentres,   // k × 2: where Groups[g] (of the result) sits, the mean position of its documents, at (GroupCentres[2g], GroupCentres[2g + 1])
    double XVarianceShare,
    double YVarianceShare,
    int FittedDocumentCount)
{
    /// <summary>Documents the principal components are fitted on; larger batches are sampled (seeded) and all documents projected.</summary>
    public const int DefaultSampleSize = PrincipalComponentsDefaults.SampleSize;

    /// <summary>Fits the axes on the unit rows, places every row, then each group at the mean of its rows' positions.</summary>
    /// <param name="unitRows">n × d unit rows.</param>
    /// <param name="groupOfRow">Position (0 .. groupCount − 1) in the result's group list of each row's group.</param>
    internal static DocumentMap Build(
        EmbeddingMatrix unitRows,
        int[] groupOfRow,
        int groupCount,
        int sampleSize,
        ulong seed,
        int maxDegreeOfParallelism,
        CancellationToken cancellationToken)
    {
        int n = unitRows.Rows;
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

        // The mean position equals the projection of the group's mean vector (projection is linear); the normalised
        // centroid would sit further out than its documents, since a mean of unit vectors is shorter than 1.
        double[] sums = new double[groupCount * 2];
        int[] sizes = new int[groupCount];
        for (int i = 0; i < n; i++)
        {
            int g = groupOfRow[i];
            sums[2 * g] += coordinates[2 * i];
            sums[2 * g + 1] += coordinates[2 * i + 1];
            sizes[g]++;
        }

        float[] centres = new float[groupCount * 2];
        for (int g = 0; g < groupCount; g++)
        {
            centres[2 * g] = sizes[g] > 0 ? (float)(sums[2 * g] / sizes[g]) : 0f;
            centres[2 * g + 1] = sizes[g] > 0 ? (float)(sums[2 * g + 1] / sizes[g]) : 0f;
        }

        return new DocumentMap(
            coordinates,
            centres,
            axes.VarianceShare(0),
            axes.ComponentCount > 1 ? axes.VarianceShare(1) : 0,
            axes.FittedRowCount);
    }
}
