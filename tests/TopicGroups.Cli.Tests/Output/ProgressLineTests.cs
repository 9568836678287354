using TopicGroups.Cli.Output;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Tests.Output;

public sealed class ProgressLineTests
{
    [Fact]
    public void ForTerminal_WriterIsNotTheConsole_NoProgressLine()
    {
        // Redirected or captured stderr must never receive carriage-return status lines.
        Assert.Null(ProgressLine.ForTerminal(new StringWriter(), documentCount: 10));
    }

    [Fact]
    public void Describe_Refining_RestartCountedFromOneIterationAndObjective()
    {
        // The service numbers restarts from 0; people count from 1.
        var progress = new GroupingProgress { Stage = GroupingStage.Refining, Restart = 2, Iteration = 14, Objective = 0.612345 };

        Assert.Equal("refining: restart 3, iteration 14, objective 0.6123", ProgressLine.Describe(progress, documentCount: 0));
    }

    [Fact]
    public void Describe_Receiving_ShowsHowManyOfTheBatch()
    {
        var progress = new GroupingProgress { Stage = GroupingStage.Receiving, DocumentsReceived = 12000 };

        Assert.Equal("sending documents: 12,000 of 40,000 received", ProgressLine.Describe(progress, documentCount: 40000));
        Assert.Equal("sending documents: 12,000 received", ProgressLine.Describe(progress, documentCount: 0));
    }
}
