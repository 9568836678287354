using System.Globalization;
using System.Text;
using System.Text.Json;
using TopicGroups.Cli.Commands;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Commands;

// The whole path a user runs: real parser, real files, the service hosted in-process on a loopback
// port, TopicGroupsClient over a real gRPC channel, the Core's clustering and terms, then the report
// and the files. The data are three well-separated themes, so the right answer is known.
public sealed class GroupCommandEndToEndTests : IDisposable
{
    private const int PerTheme = 10;
    private const int Dimensions = 16;

    private static readonly (string Keyword, string[] Sentences)[] Themes =
    [
        ("refund", ["refund the double charge on my card", "still waiting for my refund", "refund for the cancelled order please", "charged twice, need a refund"]),
        ("password", ["password reset email never arrives", "cannot log in, password rejected", "the password reset link expired", "forgot my password again"]),
        ("parcel", ["the parcel went to the wrong door", "courier says parcel delivered but nothing here", "parcel arrived crushed", "where is my parcel"]),
    ];

    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    // Theme t points along coordinate 5t; every row gets seeded noise of at most 0.15 per coordinate,
    // so rows of one theme have cosine above about 0.9 with each other and below 0.3 with the rest.
    private string WriteThemes(string name, Func<int, string>? idOf = null)
    {
        var random = new Random(20261201);
        var builder = new StringBuilder();
        for (int i = 0; i < PerTheme * Themes.Length; i++)
        {
            int theme = i % Themes.Length;
            float[] embedding = new float[Dimensions];
            for (int j = 0; j < Dimensions; j++)
            {
                embedding[j] = (float)((random.NextDouble() - 0.5) * 0.3);
            }

            embedding[5 * theme] += 1f;
            string text = Themes[theme].Sentences[(i / Themes.Length) % Themes[theme].Sentences.Length];
            string id = idOf?.Invoke(i) ?? $"t{i:D2}";
            builder.Append(CultureInfo.InvariantCulture,
                $"{{\"id\": \"{id}\", \"theme\": {theme}, \"text\": \"{text}\", \"embedding\": [{string.Join(", ", embedding.Select(v => v.ToString("R", CultureInfo.InvariantCulture)))}]}}\n");
        }

        return _directory.WriteText(name, builder.ToString());
    }

    [Fact]
    public async Task Group_ThreeSeparatedThemesInProcess_EachGroupIsOneThemeWithItsKeywordAmongTerms()
    {
        string input = WriteThemes("themes.jsonl");
        string json = _directory.File("result.json");
        string csv = _directory.File("assignments.csv");

        var (exitCode, output, error) = await CliRun.RunAsync(ServiceGrouping.RunAsync,
            "group", "--input", input, "--groups", "3", "--seed", "7", "--terms", "5", "--output", json, "--csv", csv);

        Assert.True(exitCode == ExitCodes.Success, error);
        Assert.StartsWith("30 documents, 16 dimensions -> 3 groups   objective 0.", output);
        Assert.Contains("converged", CliRun.Lines(output)[0]);

        using JsonDocument result = JsonDocument.Parse(File.ReadAllBytes(json));
        JsonElement[] placements = result.RootElement.GetProperty("documents").EnumerateArray().ToArray();
        Assert.Equal(30, placements.Length);
        // Same theme <=> same group (document i has theme i % 3).
        var groupOfTheme = new Dictionary<int, int>();
        for (int i = 0; i < placements.Length; i++)
        {
            Assert.Equal($"t{i:D2}", placements[i].GetProperty("id").GetString());
            int group = placements[i].GetProperty("group").GetInt32();
            Assert.Equal(group, groupOfTheme.TryAdd(i % 3, group) ? group : groupOfTheme[i % 3]);
        }

        Assert.Equal(3, groupOfTheme.Values.Distinct().Count());
        foreach (JsonElement group in result.RootElement.GetProperty("groups").EnumerateArray())
        {
            Assert.Equal(PerTheme, group.GetProperty("size").GetInt32());
            int theme = groupOfTheme.Single(p => p.Value == group.GetProperty("id").GetInt32()).Key;
            string[] terms = group.GetProperty("terms").EnumerateArray().Select(t => t.GetProperty("term").GetString()!).ToArray();
            Assert.Contains(Themes[theme].Keyword, terms);
            Assert.True(group.GetProperty("cohesion").GetDouble() > 0.8, $"group {group.GetProperty("id")} cohesion");
        }

        Assert.Equal(31, File.ReadAllLines(csv).Length);
        Assert.Contains("Group 1 ", output);
    }

    [Fact]
    public async Task Group_ServerRejectsBatch_PrintsStatusAndEachFieldViolationExitTwo()
    {
        // The CLI passes these on; the service's own validation rejects them (ids are 1-256 characters,
        // restarts at most 64 by the server's limits), and the CLI prints each violation on its own line.
        string input = WriteThemes("long-ids.jsonl", i => i == 1 ? new string('x', 300) : $"t{i:D2}");

        var (exitCode, output, error) = await CliRun.RunAsync(ServiceGrouping.RunAsync,
            "group", "--input", input, "--groups", "3", "--restarts", "100");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        string[] lines = CliRun.Lines(error);
        Assert.StartsWith("in-process server: InvalidArgument: ", lines[0]);
        Assert.Contains(lines, l => l.StartsWith("  documents[1].id: ", StringComparison.Ordinal));
        Assert.Contains(lines, l => l.StartsWith("  options.restart_count: ", StringComparison.Ordinal));
        Assert.Equal("", output);
    }

    [Fact]
    public async Task Demo_BundledTickets_TwelveGroupsCoverEveryTicket()
    {
        string json = _directory.File("demo.json");

        var (exitCode, output, error) = await CliRun.RunAsync(ServiceGrouping.RunAsync, "demo", "--output", json, "--no-report");

        Assert.True(exitCode == ExitCodes.Success, error);
        using JsonDocument result = JsonDocument.Parse(File.ReadAllBytes(json));
        int tickets = File.ReadLines(Path.Combine(AppContext.BaseDirectory, "demo", "tickets.jsonl")).Count(l => l.Trim().Length > 0);
        Assert.Equal(tickets, result.RootElement.GetProperty("documents").GetArrayLength());
        Assert.Equal(12, result.RootElement.GetProperty("groups").GetArrayLength());
        Assert.Equal(tickets, result.RootElement.GetProperty("groups").EnumerateArray().Sum(g => g.GetProperty("size").GetInt32()));
        Assert.Contains($"{tickets} documents, 384 dimensions -> 12 groups", output);
    }
}
