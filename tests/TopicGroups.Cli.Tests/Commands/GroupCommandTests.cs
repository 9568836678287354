using System.Text.Json;
using Google.Protobuf.WellKnownTypes;
using Google.Rpc;
using Grpc.Core;
using TopicGroups.Cli.Commands;
using TopicGroups.Cli.Input;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Commands;

// The command through the real parser with a fake service (FakeGrouping): what reaches the call,
// what is printed, what is written, and how each kind of bad input is answered.
public sealed class GroupCommandTests : IDisposable
{
    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    private string WriteDocuments(string name, int count, bool withEmbeddings)
    {
        var lines = Enumerable.Range(0, count).Select(i =>
        {
            string embedding = withEmbeddings ? $", \"embedding\": [{(i % 2 == 0 ? "0.9, 0.1" : "0.1, 0.9")}, 0.5]" : "";
            return $"{{\"id\": \"doc-{i}\", \"text\": \"ticket number {i}\"{embedding}}}";
        });
        return _directory.WriteText(name, string.Join("\n", lines) + "\n");
    }

    [Fact]
    public async Task Group_JsonlWithNpy_RowIBecomesDocumentIEmbeddingAndOptionsAreSent()
    {
        string documents = WriteDocuments("d.jsonl", 4, withEmbeddings: false);
        float[] rows = [0.9f, 0.1f, 0.5f, 0.2f, 0.8f, 0.5f, 0.7f, 0.3f, 0.5f, 0f, 1f, 0.5f];
        string embeddings = _directory.File("e.npy");
        NpyWriter.Write(embeddings, rows, rows: 4, columns: 3);
        var fake = new FakeGrouping();

        var (exitCode, output, error) = await CliRun.RunAsync(fake.Call,
            "group", "--input", documents, "--embeddings", embeddings, "--groups", "2", "--seed", "9", "--restarts", "3",
            "--max-iterations", "20", "--terms", "5", "--examples", "2", "--bigrams");

        Assert.Equal("", error);
        Assert.Equal(ExitCodes.Success, exitCode);
        Assert.Null(fake.Server); // no --server: in-process
        Assert.Equal(["doc-0", "doc-1", "doc-2", "doc-3"], fake.Documents!.Select(d => d.Id));
        for (int i = 0; i < 4; i++)
        {
            Assert.Equal(rows.AsSpan(i * 3, 3).ToArray(), fake.Documents![i].Embedding);
        }

        Assert.Equal(2, fake.Options!.GroupCount);
        Assert.Equal(9UL, fake.Options.Seed);
        Assert.Equal((3, 20, 5, 2, true), (fake.Options.RestartCount, fake.Options.MaxIterations, fake.Options.TermCount, fake.Options.ExampleCount, fake.Options.IncludeBigrams));
        Assert.StartsWith("4 documents, 3 dimensions -> 2 groups", output);
    }

    [Fact]
    public async Task Group_NoTuningOptions_ZeroSentSoServerDefaultsApply()
    {
        string documents = WriteDocuments("d.jsonl", 4, withEmbeddings: true);
        var fake = new FakeGrouping();

        var (exitCode, _, _) = await CliRun.RunAsync(fake.Call, "group", "--input", documents, "--groups", "2");

        Assert.Equal(ExitCodes.Success, exitCode);
        Assert.False(fake.Options!.HasSeed);
        Assert.Equal((0, 0, 0, 0, false), (fake.Options.RestartCount, fake.Options.MaxIterations, fake.Options.TermCount, fake.Options.ExampleCount, fake.Options.IncludeBigrams));
    }

    [Fact]
    public async Task Group_OutputAndCsv_FilesHoldEveryDocumentPlacement()
    {
        string documents = WriteDocuments("d.jsonl", 6, withEmbeddings: true);
        string json = _directory.File("result.json");
        string csv = _directory.File("assignments.csv");
        var fake = new FakeGrouping();

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call,
            "group", "-i", documents, "-k", "2", "--output", json, "--csv", csv);

        Assert.Equal(ExitCodes.Success, exitCode);
        using JsonDocument result = JsonDocument.Parse(File.ReadAllBytes(json));
        JsonElement[] placements = result.RootElement.GetProperty("documents").EnumerateArray().ToArray();
        // The fake puts even documents ([0.9, 0.1, ...]) in group 1 and odd ones in group 2.
        Assert.Equal([1, 2, 1, 2, 1, 2], placements.Select(p => p.GetProperty("group").GetInt32()));
        Assert.Equal(2, result.RootElement.GetProperty("groups").GetArrayLength());
        Assert.Equal(6, result.RootElement.GetProperty("statistics").GetProperty("document_count").GetInt32());
        string[] rows = File.ReadAllText(csv).Split("\r\n", StringSplitOptions.RemoveEmptyEntries);
        Assert.Equal(7, rows.Length);
        Assert.Equal("doc-1,2,0.9,0.1,false,1,0.5", rows[2]);
        Assert.Contains($"wrote {json}", error);
        Assert.Contains($"wrote {csv}", error);
    }

    [Fact]
    public async Task Group_ServerAddress_CallGoesToThatServer()
    {
        string documents = WriteDocuments("d.jsonl", 2, withEmbeddings: true);
        var fake = new FakeGrouping();

        var (exitCode, _, _) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "-k", "1", "--server", "http://tickets.example:5231");

        Assert.Equal(ExitCodes.Success, exitCode);
        Assert.Equal(new Uri("http://tickets.example:5231"), fake.Server);
    }

    [Fact]
    public async Task Group_NpyRowCountDiffers_OneLineNamingBothFilesExitTwo()
    {
        string documents = WriteDocuments("tickets.jsonl", 4, withEmbeddings: false);
        string embeddings = _directory.File("embeddings.npy");
        NpyWriter.Write(embeddings, new float[9], rows: 3, columns: 3);
        var fake = new FakeGrouping();

        var (exitCode, output, error) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "-e", embeddings, "-k", "2");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(["embeddings.npy: has 3 rows but tickets.jsonl has 4 documents; row i must be the embedding of the i-th document"], CliRun.Lines(error));
        Assert.Equal("", output);
        Assert.Equal(0, fake.Calls);
    }

    [Fact]
    public async Task Group_NpyOfIntegers_OneLineNamingDtypeExitTwo()
    {
        string documents = WriteDocuments("d.jsonl", 2, withEmbeddings: false);
        string embeddings = _directory.WriteBytes("x.npy", NumpyFixtures.Bytes(NumpyFixtures.Int32TwoByTwo));

        var (exitCode, _, error) = await CliRun.RunAsync(new FakeGrouping().Call, "group", "-i", documents, "-e", embeddings, "-k", "1");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(["x.npy: dtype '<i4' is not supported; write float32 ('<f4')"], CliRun.Lines(error));
    }

    [Fact]
    public async Task Group_NpyFloat64BeyondFloat32Range_NamesRowValueAndDocumentLine()
    {
        // Row 1 of this numpy-written file holds 3e40, which is infinite as float32.
        string documents = WriteDocuments("d.jsonl", 2, withEmbeddings: false);
        string embeddings = _directory.WriteBytes("wide.npy", NumpyFixtures.Bytes(NumpyFixtures.Float64TwoByTwo));

        var (exitCode, _, error) = await CliRun.RunAsync(new FakeGrouping().Call, "group", "-i", documents, "-e", embeddings, "-k", "1");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(["wide.npy row 1: value 0 is infinite or beyond float32's range (±3.4e38); embeddings must be finite numbers (document on d.jsonl line 2)"], CliRun.Lines(error));
    }

    [Fact]
    public async Task Group_MalformedJsonlLine_OneLineNamingFileAndLineExitTwo()
    {
        string documents = _directory.WriteText("tickets.jsonl",
            "{\"id\": \"a\", \"text\": \"x\", \"embedding\": [1, 0]}\n{\"text\": \"no id\", \"embedding\": [0, 1]}\n");
        var fake = new FakeGrouping();

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "-k", "1");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(["tickets.jsonl line 2: expected a JSON object with \"id\" (string)"], CliRun.Lines(error));
        Assert.Equal(0, fake.Calls);
    }

    [Fact]
    public async Task Group_DuplicateIds_NamesBothLinesExitTwo()
    {
        string documents = _directory.WriteText("d.jsonl",
            "{\"id\": \"T-1\", \"text\": \"x\", \"embedding\": [1, 0]}\n{\"id\": \"T-2\", \"text\": \"y\", \"embedding\": [0, 1]}\n{\"id\": \"T-1\", \"text\": \"z\", \"embedding\": [1, 1]}\n");

        var (exitCode, _, error) = await CliRun.RunAsync(new FakeGrouping().Call, "group", "-i", documents, "-k", "1");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(["d.jsonl line 3: id \"T-1\" is already used on line 1; ids must be unique"], CliRun.Lines(error));
    }

    [Fact]
    public async Task Group_MissingInputFile_NamesItExitTwo()
    {
        string missing = _directory.File("gone.jsonl");

        var (exitCode, _, error) = await CliRun.RunAsync(new FakeGrouping().Call, "group", "-i", missing, "-k", "2");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal([$"gone.jsonl: file not found (looked for {missing})"], CliRun.Lines(error));
    }

    [Fact]
    public async Task Group_MoreGroupsThanDocuments_SaysTheLimitExitTwo()
    {
        string documents = WriteDocuments("d.jsonl", 3, withEmbeddings: true);
        var fake = new FakeGrouping();

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "-k", "5");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(["--groups 5 is more than the 3 documents in d.jsonl; ask for at most 3"], CliRun.Lines(error));
        Assert.Equal(0, fake.Calls);
    }

    [Theory]
    [InlineData("--groups", "0", "--groups '0' is not a count of at least 1, 'auto', or a range like 5..40")]
    [InlineData("--restarts", "-2", "--restarts must be at least 1 (got -2)")]
    [InlineData("--server", "localhost:5231", "--server 'localhost:5231' is not an absolute http:// or https:// address")]
    public async Task Group_InvalidOptionValue_ParseErrorExitTwo(string option, string value, string expected)
    {
        string documents = WriteDocuments("d.jsonl", 3, withEmbeddings: true);
        string[] args = option == "--groups"
            ? ["group", "-i", documents, option, value]
            : ["group", "-i", documents, "-k", "2", option, value];
        var fake = new FakeGrouping();

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call, args);

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Contains(expected, error);
        Assert.Equal(0, fake.Calls);
    }

    [Fact]
    public async Task Group_RequiredOptionMissing_ErrorAndWhereToLookNotTheWholeHelpPage()
    {
        string documents = WriteDocuments("d.jsonl", 3, withEmbeddings: true);

        var (exitCode, output, error) = await CliRun.RunAsync(new FakeGrouping().Call, "group", "-i", documents);

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(["Option '--groups' is required.", "Run 'topicgroups group --help' to see the options."], CliRun.Lines(error));
        Assert.DoesNotContain("Usage:", output + error);
    }

    [Fact]
    public async Task Group_ServiceRejectsWithFieldViolations_StatusThenEachViolationOnItsOwnLineExitTwo()
    {
        var badRequest = new BadRequest();
        badRequest.FieldViolations.Add(new BadRequest.Types.FieldViolation { Field = "documents[3].embedding", Description = "is all zeros; a direction is needed." });
        badRequest.FieldViolations.Add(new BadRequest.Types.FieldViolation { Field = "options.restart_count", Description = "is 100; use at most 64." });
        var status = new Google.Rpc.Status { Code = (int)Code.InvalidArgument, Message = "The request has 2 problems." };
        status.Details.Add(Any.Pack(badRequest));
        var fake = new FakeGrouping { Failure = status.ToRpcException() };
        string documents = WriteDocuments("d.jsonl", 4, withEmbeddings: true);

        var (exitCode, output, error) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "-k", "2");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(
            [
                "in-process server: InvalidArgument: The request has 2 problems.",
                "  documents[3].embedding: is all zeros; a direction is needed.",
                "  options.restart_count: is 100; use at most 64.",
            ],
            CliRun.Lines(error));
        Assert.Equal("", output);
    }

    [Fact]
    public async Task Group_ServerUnreachable_SaysWhereAndExitOne()
    {
        var fake = new FakeGrouping { Failure = new RpcException(new Grpc.Core.Status(StatusCode.Unavailable, "Error connecting to subchannel.")) };
        string documents = WriteDocuments("d.jsonl", 2, withEmbeddings: true);

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "-k", "1", "--server", "http://localhost:5999");

        Assert.Equal(ExitCodes.Failure, exitCode);
        string[] lines = CliRun.Lines(error);
        Assert.Equal("server http://localhost:5999/: Unavailable: Error connecting to subchannel.", lines[0]);
        Assert.Contains("is a TopicGroups server running at http://localhost:5999/?", lines[1]);
    }

    [Fact]
    public async Task Group_OutputDirectoryMissing_SaysCannotWriteExitOne()
    {
        string documents = WriteDocuments("d.jsonl", 2, withEmbeddings: true);
        string json = Path.Combine(_directory.Path, "no-such-folder", "r.json");

        var (exitCode, output, error) = await CliRun.RunAsync(new FakeGrouping().Call, "group", "-i", documents, "-k", "1", "-o", json);

        Assert.Equal(ExitCodes.Failure, exitCode);
        Assert.StartsWith($"{json}: cannot write: ", error);
        Assert.StartsWith("2 documents", output); // the report was still printed
    }
}
