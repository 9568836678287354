using System.Globalization;
using System.Text;
using System.Text.Json;
using Microsoft.Data.Sqlite;
using TopicGroups.Cli.Commands;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Commands;

// group --save / --reference, route and groupings list|show|delete as a user runs them: the real parser, real
// files, the service in-process on a loopback port with its saved groupings in a SQLite file (--store) under a
// temporary folder. Four invented themes of a bicycle-rental help desk, each along its own axis.
public sealed class SavedGroupingCommandsTests : IDisposable
{
    private const int Dimensions = 16;

    private static readonly (string Keyword, string[] Sentences)[] Themes =
    [
        ("dock", ["the dock at the station was full", "no free dock near the park", "dock rejected my bike", "dock light stays red"]),
        ("deposit", ["deposit still not refunded", "charged the deposit twice", "when is my deposit returned", "deposit taken after the ride"]),
        ("brake", ["front brake feels loose", "brake squeaks on every stop", "rear brake not working", "brake cable snapped"]),
        ("helmet", ["left my helmet in the basket", "helmet lost on route 4", "found a helmet at the dock", "helmet strap broke"]),
    ];

    private readonly TempDirectory _directory = new();

    private string Store => _directory.File("groupings.db");

    public void Dispose()
    {
        SqliteConnection.ClearAllPools();
        _directory.Dispose();
    }

    private string WriteTickets(string name, int[] themes, int perTheme, int seed, string idPrefix)
    {
        var random = new Random(seed);
        var builder = new StringBuilder();
        int i = 0;
        for (int round = 0; round < perTheme; round++)
        {
            foreach (int theme in themes)
            {
                float[] embedding = new float[Dimensions];
                for (int j = 0; j < Dimensions; j++)
                {
                    embedding[j] = (float)((random.NextDouble() - 0.5) * 0.2);
                }

                embedding[3 * theme] += 1f;
                string text = Themes[theme].Sentences[random.Next(Themes[theme].Sentences.Length)];
                builder.Append(CultureInfo.InvariantCulture,
                    $"{{\"id\": \"{idPrefix}{i++:D3}\", \"text\": \"{text}\", \"embedding\": [{string.Join(", ", embedding.Select(v => v.ToString("R", CultureInfo.InvariantCulture)))}]}}\n");
            }
        }

        return _directory.WriteText(name, builder.ToString());
    }

    private static Task<(int ExitCode, string Output, string Error)> Run(params string[] args) =>
        CliRun.RunAsync(ServiceGrouping.RunAsync, args);

    [Fact]
    public async Task GroupSaveThenReference_ThemesKeepTheirIdsAndTheChangeReportSaysWhatChanged()
    {
        string lastWeek = WriteTickets("w47.jsonl", [0, 1, 2, 3], perTheme: 12, seed: 1, idPrefix: "a");
        string thisWeek = WriteTickets("w48.jsonl", [0, 1, 2], perTheme: 16, seed: 2, idPrefix: "b");   // helmets gone
        string json = _directory.File("w48.json");

        var saved = await Run("group", "--input", lastWeek, "--groups", "4", "--save", "week-47", "--store", Store);
        var continued = await Run("group", "--input", thisWeek, "--groups", "3", "--reference", "week-47", "--store", Store, "--output", json);

        Assert.True(saved.ExitCode == 0, saved.Error);
        Assert.Contains("Saved as groupings/week-47", saved.Output);
        Assert.True(continued.ExitCode == 0, continued.Error);
        string[] lines = CliRun.Lines(continued.Output);
        Assert.Contains(lines, l => l.StartsWith("Changes since groupings/week-47 (48 documents then, 48 now): 3 continued, 0 new, 1 faded", StringComparison.Ordinal));
        Assert.Contains(lines, l => l.Trim() == "Faded");
        string fadedLine = lines.SkipWhile(l => l.Trim() != "Faded").ElementAt(1);
        Assert.Contains("12 -> 0 (25.0% -> 0.0%)", fadedLine);
        Assert.Contains("helmet", fadedLine);

        // Each continuing theme's documents carry last week's id for that theme; the JSON holds the report too.
        using JsonDocument result = JsonDocument.Parse(File.ReadAllText(json));
        JsonElement changes = result.RootElement.GetProperty("changes");
        Assert.Equal("groupings/week-47", changes.GetProperty("reference").GetString());
        Assert.Equal(["continued", "continued", "continued", "faded"], changes.GetProperty("themes").EnumerateArray().Select(t => t.GetProperty("kind").GetString()));
        Assert.Equal(JsonValueKind.Null, result.RootElement.GetProperty("saved_grouping").ValueKind);
        var idOfKeywordThisWeek = GroupIdsByKeyword(result.RootElement);
        var idOfKeywordLastWeek = GroupIdsByKeyword(await GroupJson(lastWeek, "4"));
        foreach (string keyword in new[] { "dock", "deposit", "brake" })
        {
            Assert.Equal(idOfKeywordLastWeek[keyword], idOfKeywordThisWeek[keyword]);
        }
    }

    private async Task<JsonElement> GroupJson(string input, string groups)
    {
        string json = _directory.File(Guid.NewGuid().ToString("N") + ".json");
        var (exitCode, _, error) = await Run("group", "--input", input, "--groups", groups, "--store", Store, "--output", json);
        Assert.True(exitCode == 0, error);
        return JsonDocument.Parse(File.ReadAllText(json)).RootElement.Clone();
    }

    private static Dictionary<string, int> GroupIdsByKeyword(JsonElement result) =>
        result.GetProperty("groups").EnumerateArray().ToDictionary(
            g => Themes.Select(t => t.Keyword).First(k => g.GetProperty("terms").EnumerateArray().Take(3).Any(t => t.GetProperty("term").GetString() == k)),
            g => g.GetProperty("id").GetInt32());

    [Fact]
    public async Task Route_NewTicketsIntoSavedGrouping_JsonHasAPlacementPerTicketLikeGroupWrites()
    {
        string lastWeek = WriteTickets("w47.jsonl", [0, 1, 2, 3], perTheme: 12, seed: 1, idPrefix: "a");
        string incoming = WriteTickets("today.jsonl", [2, 0], perTheme: 3, seed: 3, idPrefix: "n");
        string json = _directory.File("routed.json");
        string grouped = _directory.File("grouped.json");
        await Run("group", "--input", lastWeek, "--groups", "4", "--save", "week-47", "--store", Store, "--output", grouped);

        var (exitCode, output, error) = await Run("route", "--grouping", "week-47", "--input", incoming, "--output", json, "--store", Store);

        Assert.True(exitCode == 0, error);
        Assert.StartsWith("Routed 6 documents into groupings/week-47 (4 groups)", output);
        Assert.Contains("Every document fits its group.", output);
        using JsonDocument routed = JsonDocument.Parse(File.ReadAllText(json));
        Assert.Equal("groupings/week-47", routed.RootElement.GetProperty("grouping").GetString());
        JsonElement[] documents = routed.RootElement.GetProperty("documents").EnumerateArray().ToArray();
        Assert.Equal(["n000", "n001", "n002", "n003", "n004", "n005"], documents.Select(d => d.GetProperty("id").GetString()));
        using JsonDocument saved = JsonDocument.Parse(File.ReadAllText(grouped));
        var ids = GroupIdsByKeyword(saved.RootElement);
        Assert.All(documents.Where((_, i) => i % 2 == 0), d => Assert.Equal(ids["brake"], d.GetProperty("group").GetInt32()));
        Assert.All(documents.Where((_, i) => i % 2 == 1), d => Assert.Equal(ids["dock"], d.GetProperty("group").GetInt32()));
        Assert.All(documents, d => Assert.False(d.GetProperty("outlier").GetBoolean()));
        Assert.All(documents, d => Assert.InRange(d.GetProperty("similarity").GetDouble(), 0.8, 1.0001));
        Assert.All(documents, d => Assert.True(d.GetProperty("margin").GetDouble() > 0.5));
        Assert.All(documents, d => Assert.NotEqual(JsonValueKind.Null, d.GetProperty("runner_up_group").ValueKind));
    }

    [Fact]
    public async Task Groupings_ListShowDelete_WhatIsSavedThenNotFound()
    {
        string tickets = WriteTickets("w47.jsonl", [0, 1, 2, 3], perTheme: 10, seed: 1, idPrefix: "a");
        await Run("group", "--input", tickets, "--groups", "4", "--save", "week-47", "--store", Store);
        await Run("group", "--input", tickets, "--groups", "2", "--save", "coarse", "--store", Store);

        var list = await Run("groupings", "list", "--store", Store);
        var show = await Run("groupings", "show", "week-47", "--store", Store);
        var delete = await Run("groupings", "delete", "groupings/week-47", "--store", Store);
        var gone = await Run("groupings", "show", "week-47", "--store", Store);

        string[] listed = CliRun.Lines(list.Output);
        Assert.StartsWith("NAME", listed[0]);
        Assert.StartsWith("coarse ", listed[1]);     // newest first
        Assert.StartsWith("week-47 ", listed[2]);
        Assert.Contains("2 saved groupings in in-process server (store", list.Output);
        Assert.StartsWith("groupings/week-47   saved ", show.Output);
        Assert.Equal(4, CliRun.Lines(show.Output).Count(l => l.StartsWith("Group ", StringComparison.Ordinal)));
        Assert.Contains("usual similarity", show.Output);
        Assert.Equal((0, "deleted groupings/week-47"), (delete.ExitCode, delete.Output.Trim()));
        Assert.Equal(ExitCodes.BadInput, gone.ExitCode);
        Assert.Contains("NotFound", gone.Error);
        Assert.Contains($"groupings list --store {Store}", gone.Error);
    }

    [Fact]
    public async Task Group_SaveUnderTakenName_AlreadyExistsUnlessReplace()
    {
        string tickets = WriteTickets("w47.jsonl", [0, 1], perTheme: 6, seed: 1, idPrefix: "a");
        await Run("group", "--input", tickets, "--groups", "2", "--save", "daily", "--store", Store);

        var taken = await Run("group", "--input", tickets, "--groups", "2", "--save", "daily", "--store", Store);
        var replaced = await Run("group", "--input", tickets, "--groups", "1", "--save", "daily", "--replace", "--store", Store);

        Assert.Equal(ExitCodes.BadInput, taken.ExitCode);
        Assert.Contains("AlreadyExists", taken.Error);
        Assert.Contains("replace_saved", taken.Error);
        Assert.True(replaced.ExitCode == 0, replaced.Error);
    }

    [Theory]
    [InlineData("--replace needs --save NAME", "group", "--input", "x.jsonl", "--groups", "2", "--replace")]
    [InlineData("--warm-start and --min-match need --reference NAME", "group", "--input", "x.jsonl", "--groups", "2", "--warm-start")]
    [InlineData("--min-match must be above 0 and at most 1", "group", "--input", "x.jsonl", "--groups", "2", "--reference", "r", "--min-match", "1.5")]
    [InlineData("Option '--grouping' is required", "route", "--input", "x.jsonl")]
    public async Task Parse_InconsistentOptions_UsageErrorNamingTheFix(string expected, params string[] args)
    {
        var (exitCode, _, error) = await Run(args);

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Contains(expected, error);
    }

    [Fact]
    public async Task Route_DocumentsWithoutEmbeddings_BadInputSayingHowToFix()
    {
        string tickets = WriteTickets("w47.jsonl", [0, 1], perTheme: 6, seed: 1, idPrefix: "a");
        await Run("group", "--input", tickets, "--groups", "2", "--save", "plain", "--store", Store);
        string textsOnly = _directory.WriteText("texts.jsonl", "{\"id\": \"q1\", \"text\": \"dock is full\"}\n");

        var (exitCode, _, error) = await Run("route", "--grouping", "plain", "--input", textsOnly, "--store", Store);

        // The JSONL reader accepts texts without embeddings (for grouping, the service can embed them); routing cannot.
        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Contains("texts.jsonl", error);
        Assert.Contains("\"embedding\"", error);
    }
}
