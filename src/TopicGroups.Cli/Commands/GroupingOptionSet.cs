using System.CommandLine;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Commands;

/// <summary>The options <c>group</c> and <c>demo</c> share: tuning, outputs and where the service runs.</summary>
internal sealed class GroupingOptionSet
{
    public Option<ulong?> Seed { get; } = new("--seed") { Description = "Seed for the initial centres; the same seed and input give the same groups. Default: the server's (0)." };

    public Option<int> Restarts { get; } = new("--restarts") { Description = "Independent runs; the best is kept. Default: the server's." };

    public Option<int> MaxIterations { get; } = new("--max-iterations") { Description = "Refinement iterations per run at most. Default: the server's." };

    public Option<int> Terms { get; } = new("--terms") { Description = "Top terms per group. Default: the server's." };

    public Option<int> Examples { get; } = new("--examples") { Description = "Documents nearest each centre to return. Default: the server's." };

    public Option<bool> Bigrams { get; } = new("--bigrams") { Description = "Also weigh two-word phrases as terms." };

    public Option<string?> Output { get; } = new("--output", "-o") { Description = "Write the full result as JSON to this file." };

    public Option<string?> Csv { get; } = new("--csv") { Description = "Write one row per document (id,group,similarity,margin,outlier) to this CSV file." };

    public Option<string?> ServerAddress { get; } = new("--server") { Description = "Address of a running TopicGroups server (http://host:port). Default: run the service inside this process." };

    public void AddTo(Command command)
    {
        command.Add(Seed);
        command.Add(Restarts);
        command.Add(MaxIterations);
        command.Add(Terms);
        command.Add(Examples);
        command.Add(Bigrams);
        command.Add(Output);
        command.Add(Csv);
        command.Add(ServerAddress);
        GroupCommand.AddPositiveValidator(Restarts);
        GroupCommand.AddPositiveValidator(MaxIterations);
        GroupCommand.AddPositiveValidator(Terms);
        GroupCommand.AddPositiveValidator(Examples);
        ServerAddress.Validators.Add(result =>
        {
            string? text = result.GetValueOrDefault<string?>();
            if (text is not null && ParseServer(text) is null)
            {
                result.AddError($"--server '{text}' is not an absolute http:// or https:// address, e.g. http://localhost:{TopicGroups.Server.ServerHost.DefaultPort}");
            }
        });
    }

    /// <summary>The request options; 0 leaves a setting to the server's default.</summary>
    public GroupingOptions ToProto(ParseResult parseResult, int groupCount)
    {
        var options = new GroupingOptions
        {
            GroupCount = groupCount,
            RestartCount = parseResult.GetValue(Restarts),
            MaxIterations = parseResult.GetValue(MaxIterations),
            TermCount = parseResult.GetValue(Terms),
            ExampleCount = parseResult.GetValue(Examples),
            IncludeBigrams = parseResult.GetValue(Bigrams),
        };
        if (parseResult.GetValue(Seed) is ulong seed)
        {
            options.Seed = seed;
        }

        return options;
    }

    public Uri? Server(ParseResult parseResult) =>
        parseResult.GetValue(ServerAddress) is string text ? ParseServer(text) : null;

    private static Uri? ParseServer(string text) =>
        Uri.TryCreate(text, UriKind.Absolute, out Uri? uri) && (uri.Scheme == Uri.UriSchemeHttp || uri.Scheme == Uri.UriSchemeHttps)
            ? uri
            : null;
}
