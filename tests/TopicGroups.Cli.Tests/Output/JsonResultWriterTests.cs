using System.Text.Json;
using TopicGroups.Cli.Output;
using TopicGroups.Cli.Tests.TestSupport;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Tests.Output;

public sealed class JsonResultWriterTests
{
    private static JsonElement Write(GroupDocumentsResponse response, GroupingOptions options)
    {
        var stream = new MemoryStream();
        JsonResultWriter.Write(stream, response, options);
        return JsonDocument.Parse(stream.ToArray()).RootElement;
    }

    [Fact]
    public void Write_Groups_IdSizeCohesionTermsExamplesOutlierCount()
    {
        JsonElement root = Write(SampleResponses.TwoGroups(), new GroupingOptions { GroupCount = 2 });

        JsonElement group = root.GetProperty("groups").EnumerateArray().Single(g => g.GetProperty("id").GetInt32() == 1);
        Assert.Equal(3, group.GetProperty("size").GetInt32());
        Assert.Equal(0.7, group.GetProperty("cohesion").GetDouble());
        Assert.Equal(1, group.GetProperty("outlier_count").GetInt32());
        JsonElement term = group.GetProperty("terms")[0];
        Assert.Equal("parcel", term.GetProperty("term").GetString());
        Assert.Equal(4, term.GetProperty("weight").GetDouble());
        JsonElement example = group.GetProperty("examples")[0];
        Assert.Equal("d,\"1\"", example.GetProperty("id").GetString());
        Assert.Equal(0.95f, example.GetProperty("similarity").GetSingle());
        Assert.Equal(SampleResponses.LongText, example.GetProperty("text").GetString()); // whole text, not shortened
        Assert.Equal(3, group.GetProperty("examples").GetArrayLength());
    }

    [Fact]
    public void Write_Documents_InInputOrderWithPlacement()
    {
        JsonElement root = Write(SampleResponses.TwoGroups(), new GroupingOptions { GroupCount = 2 });

        JsonElement[] documents = root.GetProperty("documents").EnumerateArray().ToArray();
        Assert.Equal(["d,\"1\"", "p-1", "d-2", "p-2", "d-3"], documents.Select(d => d.GetProperty("id").GetString()));
        JsonElement last = documents[4];
        Assert.Equal(1, last.GetProperty("group").GetInt32());
        Assert.Equal(0.3f, last.GetProperty("similarity").GetSingle());
        Assert.Equal(0f, last.GetProperty("margin").GetSingle());
        Assert.Equal(2, last.GetProperty("runner_up_group").GetInt32());
        Assert.True(last.GetProperty("outlier").GetBoolean());
        Assert.False(documents[0].GetProperty("outlier").GetBoolean());
    }

    [Fact]
    public void Write_OneGroup_RunnerUpIsNullNotZero()
    {
        GroupDocumentsResponse response = SampleResponses.TwoGroups();
        response.Documents[0].RunnerUpGroupId = 0;

        JsonElement root = Write(response, new GroupingOptions { GroupCount = 1 });

        Assert.Equal(JsonValueKind.Null, root.GetProperty("documents")[0].GetProperty("runner_up_group").ValueKind);
    }

    [Fact]
    public void Write_StatisticsAndOptions_AsSentAndReturned()
    {
        var options = new GroupingOptions { GroupCount = 2, Seed = 42, RestartCount = 4, IncludeBigrams = true };

        JsonElement root = Write(SampleResponses.TwoGroups(), options);

        JsonElement statistics = root.GetProperty("statistics");
        Assert.Equal(5, statistics.GetProperty("document_count").GetInt32());
        Assert.Equal(384, statistics.GetProperty("dimensions").GetInt32());
        Assert.Equal(0.61234, statistics.GetProperty("objective").GetDouble());
        Assert.Equal(7, statistics.GetProperty("iterations").GetInt32());
        Assert.True(statistics.GetProperty("converged").GetBoolean());
        Assert.Equal(0.125, statistics.GetProperty("seconds").GetDouble());
        JsonElement sent = root.GetProperty("options");
        Assert.Equal(42UL, sent.GetProperty("seed").GetUInt64());
        Assert.Equal(4, sent.GetProperty("restart_count").GetInt32());
        Assert.Equal(JsonValueKind.Null, sent.GetProperty("max_iterations").ValueKind); // left to the server
        Assert.True(sent.GetProperty("include_bigrams").GetBoolean());
    }

    [Fact]
    public void Write_Output_IsIndentedAndKeepsNonAsciiReadable()
    {
        GroupDocumentsResponse response = SampleResponses.TwoGroups();
        response.Groups[0].Terms[0].Term = "livraison reportée";
        var stream = new MemoryStream();

        JsonResultWriter.Write(stream, response, new GroupingOptions { GroupCount = 2 });
        string text = System.Text.Encoding.UTF8.GetString(stream.ToArray());

        Assert.Contains("\n  \"groups\": [", text);
        Assert.Contains("\"livraison reportée\"", text);
    }
}
