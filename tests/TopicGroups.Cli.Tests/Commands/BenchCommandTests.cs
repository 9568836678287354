using System.Text.Json;
using TopicGroups.Cli.Input;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Commands;

// `bench` through the real parser on real .npy files. The data are four well-separated groups around
// known directions, so the right partition and its objective are known without the service.
public sealed class BenchCommandTests : IDisposable
{
    private const int Groups = 4;
    private const int PerGroup = 60;
    private const int Dimensions = 24;

    private readonly TempDirectory _directory = new();
    private readonly FakeGrouping _unused = new();

    public void Dispose() => _directory.Dispose();

    /// <summary>Group g points along coordinate 6g plus seeded noise of at most 0.1 per coordinate; rows interleave groups.</summary>
    private (string Path, float[] Values) WriteGroups(string name)
    {
        var random = new Random(20261202);
        int n = Groups * PerGroup;
        float[] values = new float[n * Dimensions];
        for (int i = 0; i < n; i++)
        {
            for (int j = 0; j < Dimensions; j++)
            {
                values[i * Dimensions + j] = (float)((random.NextDouble() - 0.5) * 0.2);
            }

            values[i * Dimensions + 6 * (i % Groups)] += 1f;
        }

        string path = _directory.File(name);
        NpyWriter.Write(path, values, n, Dimensions);
        return (path, values);
    }

    /// <summary>
    /// Mean cosine of each row to the normalised mean of its true group: the objective of the true partition,
    /// computed here in float64 independently of the Core.
    /// </summary>
    private static double TruePartitionObjective(float[] values)
    {
        int n = values.Length / Dimensions;
        double[][] unit = new double[n][];
        for (int i = 0; i < n; i++)
        {
            double[] row = values.AsSpan(i * Dimensions, Dimensions).ToArray().Select(v => (double)v).ToArray();
            double norm = Math.Sqrt(row.Sum(v => v * v));
            unit[i] = row.Select(v => v / norm).ToArray();
        }

        double total = 0;
        for (int g = 0; g < Groups; g++)
        {
            double[] sum = new double[Dimensions];
            for (int i = g; i < n; i += Groups)
            {
                for (int j = 0; j < Dimensions; j++)
                {
                    sum[j] += unit[i][j];
                }
            }

            // Σ_i x_i · s / ‖s‖ = ‖s‖ for the members of the group.
            total += Math.Sqrt(sum.Sum(v => v * v));
        }

        return total / n;
    }

    private static JsonElement SingleJsonLine(string output)
    {
        string[] lines = CliRun.Lines(output);
        Assert.Single(lines);
        return JsonDocument.Parse(lines[0]).RootElement;
    }

    [Fact]
    public async Task Bench_IterationsGiven_RunsExactlyThatManyAndPrintsOneJsonLine()
    {
        (string path, float[] values) = WriteGroups("groups.npy");

        var (exitCode, output, error) = await CliRun.RunAsync(
            _unused.Call, "bench", "--embeddings", path, "--groups", "4", "--iterations", "7", "--seed", "3");

        Assert.True(exitCode == 0, error);
        JsonElement json = SingleJsonLine(output);
        Assert.Equal("in_process", json.GetProperty("mode").GetString());
        Assert.Equal(7, json.GetProperty("iterations").GetInt32());
        Assert.Equal(Groups * PerGroup, json.GetProperty("rows").GetInt32());
        Assert.Equal(Dimensions, json.GetProperty("dimensions").GetInt32());
        double seconds = json.GetProperty("seconds").GetDouble();
        Assert.InRange(json.GetProperty("seeding_seconds").GetDouble(), 0, seconds);
        Assert.Equal(values.Length * sizeof(float), json.GetProperty("input_bytes").GetInt64());
        Assert.True(json.GetProperty("peak_memory_bytes").GetInt64() > values.Length * sizeof(float));
        Assert.Equal(0, _unused.Calls);

        // Well separated: the fit finds the true groups, so its objective is theirs.
        Assert.Equal(TruePartitionObjective(values), json.GetProperty("objective").GetDouble(), 5);
    }

    [Fact]
    public async Task Bench_FinalReassignment_ObjectiveNotBelowFitObjective()
    {
        (string path, _) = WriteGroups("groups.npy");

        // Two groups for four true ones: a coarse fit, where reassigning to the nearest centre can still gain.
        var (exitCode, output, error) = await CliRun.RunAsync(
            _unused.Call, "bench", "--embeddings", path, "--groups", "2", "--iterations", "1", "--seed", "5");

        Assert.True(exitCode == 0, error);
        JsonElement json = SingleJsonLine(output);
        Assert.True(json.GetProperty("objective").GetDouble() >= json.GetProperty("fit_objective").GetDouble() - 1e-6);
    }

    [Fact]
    public async Task Bench_NoIterationsGiven_StopsWhenConverged()
    {
        (string path, _) = WriteGroups("groups.npy");

        var (exitCode, output, error) = await CliRun.RunAsync(_unused.Call, "bench", "--embeddings", path, "--groups", "4");

        Assert.True(exitCode == 0, error);
        JsonElement json = SingleJsonLine(output);
        Assert.True(json.GetProperty("converged").GetBoolean());
        Assert.Equal(JsonValueKind.Null, json.GetProperty("iterations_requested").ValueKind);
    }

    [Fact]
    public async Task Bench_ThroughService_SameGroupsAsInProcessAndBothTimes()
    {
        (string path, float[] values) = WriteGroups("groups.npy");

        var (exitCode, output, error) = await CliRun.RunAsync(
            _unused.Call, "bench", "--embeddings", path, "--groups", "4", "--iterations", "10", "--through-service");

        Assert.True(exitCode == 0, error);
        JsonElement json = SingleJsonLine(output);
        Assert.Equal("through_service", json.GetProperty("mode").GetString());
        Assert.True(json.GetProperty("same_groups").GetBoolean());
        Assert.True(json.GetProperty("end_to_end_seconds").GetDouble() > 0);
        Assert.True(json.GetProperty("in_process_seconds").GetDouble() > 0);
        Assert.Equal(json.GetProperty("iterations").GetInt32(), json.GetProperty("in_process_iterations").GetInt32());
        Assert.Equal(TruePartitionObjective(values), json.GetProperty("objective").GetDouble(), 5);
    }

    [Fact]
    public async Task Bench_MiniBatch_StepsCountedAsIterationsAndGroupsFound()
    {
        (string path, float[] values) = WriteGroups("groups.npy");

        var (exitCode, output, error) = await CliRun.RunAsync(
            _unused.Call, "bench", "--embeddings", path, "--groups", "4", "--iterations", "6", "--mini-batch", "50", "--restarts", "3");

        Assert.True(exitCode == 0, error);
        JsonElement json = SingleJsonLine(output);
        Assert.Equal(50, json.GetProperty("mini_batch").GetInt32());
        Assert.Equal(6, json.GetProperty("iterations").GetInt32());
        Assert.Equal(TruePartitionObjective(values), json.GetProperty("objective").GetDouble(), 5);
    }

    [Fact]
    public async Task Bench_MiniBatchThroughService_ExitsTwoSayingWhy()
    {
        (string path, _) = WriteGroups("groups.npy");

        var (exitCode, _, error) = await CliRun.RunAsync(
            _unused.Call, "bench", "--embeddings", path, "--groups", "4", "--mini-batch", "50", "--through-service");

        Assert.Equal(2, exitCode);
        Assert.Contains("--mini-batch is an in-process option", error);
    }

    [Fact]
    public async Task Bench_MoreGroupsThanRows_ExitsTwoNamingGroups()
    {
        (string path, _) = WriteGroups("groups.npy");

        var (exitCode, output, error) = await CliRun.RunAsync(_unused.Call, "bench", "--embeddings", path, "--groups", "500");

        Assert.Equal(2, exitCode);
        Assert.Empty(output);
        Assert.Contains("--groups 500", error);
        Assert.Contains("at most 240", error);
    }

    [Fact]
    public async Task Bench_RowOfZeros_ExitsTwoNamingTheRow()
    {
        float[] values = new float[3 * 4];
        values[0] = 1f;
        values[2 * 4 + 1] = 1f;
        string path = _directory.File("zeros.npy");
        NpyWriter.Write(path, values, 3, 4);

        var (exitCode, _, error) = await CliRun.RunAsync(_unused.Call, "bench", "--embeddings", path, "--groups", "2");

        Assert.Equal(2, exitCode);
        Assert.Contains("zeros.npy row 1", error);
        Assert.Contains("all zeros", error);
    }

    [Fact]
    public async Task Bench_ZeroIterations_UsageError()
    {
        (string path, _) = WriteGroups("groups.npy");

        var (exitCode, _, error) = await CliRun.RunAsync(_unused.Call, "bench", "--embeddings", path, "--groups", "2", "--iterations", "0");

        Assert.Equal(2, exitCode);
        Assert.Contains("--iterations must be at least 1", error);
    }
}
