using Microsoft.Extensions.Diagnostics.HealthChecks;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Server.Services;

/// <summary>
/// Healthy when the pipeline groups a tiny fixed batch correctly: two pairs of documents on two axes must
/// come back as two groups of two. Runs the real code path (normalise, cluster, describe) on every check.
/// </summary>
internal sealed class GroupingHealthCheck(GroupingPipeline pipeline) : IHealthCheck
{
    public const string Name = "grouping";

    public Task<HealthCheckResult> CheckHealthAsync(HealthCheckContext context, CancellationToken cancellationToken = default)
    {
        try
        {
            float[] values = [1f, 0.1f, 0.9f, 0f, 0f, 1f, 0.1f, 0.9f];   // rows 0,1 near x; rows 2,3 near y
            var input = new GroupingInput(
                ["a", "b", "c", "d"],
                ["gate change", "gate closed", "meal voucher", "meal menu"],
                new EmbeddingMatrix(values, rows: 4, dimensions: 2),
                new GroupingOptions { GroupCount = 2, RestartCount = 1, MaxDegreeOfParallelism = 1 });
            GroupingResult result = pipeline.Run(input, progress: null, cancellationToken);
            IReadOnlyList<DocumentPlacement> placed = result.Documents;
            bool correct = result.Groups.Count == 2
                && placed[0].GroupId == placed[1].GroupId
                && placed[2].GroupId == placed[3].GroupId
                && placed[0].GroupId != placed[2].GroupId;
            return Task.FromResult(correct
                ? HealthCheckResult.Healthy("A fixed two-group batch was grouped correctly.")
                : HealthCheckResult.Unhealthy("A fixed two-group batch was grouped wrongly."));
        }
        catch (Exception exception) when (exception is not OperationCanceledException)
        {
            return Task.FromResult(HealthCheckResult.Unhealthy("Grouping a fixed batch failed.", exception));
        }
    }
}
