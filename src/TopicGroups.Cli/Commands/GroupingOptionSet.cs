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

    public Option<double?> OutlierThreshold { get; } = new("--outlier-threshold")
    {
        Description = "Flag a document as an outlier when its modified z-score of similarity within its group is below minus this "
            + "(higher flags fewer; docs/algorithms.md). Default: the server's (3.5).",
    };

    public Option<int> OutlierMinimumGroupSize { get; } = new("--outlier-min-group") { Description = "Groups smaller than this flag no outliers. Default: the server's (8)." };

    public Option<int> SilhouetteSample { get; } = new("--silhouette-sample") { Description = "Documents whose silhouettes are averaged for choosing the count and for quality. Default: the server's (5,000)." };

    public Option<string?> Output { get; } = new("--output", "-o") { Description = "Write the full result as JSON to this file." };

    public Option<string?> Csv { get; } = new("--csv") { Description = "Write one row per document (id,group,similarity,margin,outlier,runner_up_group,runner_up_similarity) to this CSV file." };

    public Option<string?> Report { get; } = new("--report")
    {
        Description = "Write a self-contained HTML report (map of the documents, group sizes, terms, examples, quality, outliers) to this file.",
    };

    public Option<string?> ServerAddress { get; } = new("--server") { Description = "Address of a running TopicGroups server (http://host:port or https://host:port); a server that requires an API key reads it from $TOPICGROUPS_API_KEY. Default: run the service inside this process." };

    public void AddTo(Command command)
    {
        command.Add(Seed);
        command.Add(Restarts);
        command.Add(MaxIterations);
        command.Add(Terms);
        command.Add(Examples);
        command.Add(Bigrams);
        command.Add(OutlierThreshold);
        command.Add(OutlierMinimumGroupSize);
        command.Add(SilhouetteSample);
        command.Add(Output);
        command.Add(Csv);
        command.Add(Report);
        command.Add(ServerAddress);
        GroupCommand.AddPositiveValidator(Restarts);
        GroupCommand.AddPositiveValidator(MaxIterations);
        GroupCommand.AddPositiveValidator(Terms);
        GroupCommand.AddPositiveValidator(Examples);
        GroupCommand.AddPositiveValidator(OutlierMinimumGroupSize);
        GroupCommand.AddPositiveValidator(SilhouetteSample);
        OutlierThreshold.Validators.Add(result =>
        {
            if (result.GetValueOrDefault<double?>() is double value && !(value > 0 && double.IsFinite(value)))
            {
                result.AddError($"--outlier-threshold must be a positive number (got {value.ToString(System.Globalization.CultureInfo.InvariantCulture)}); the default is 3.5");
            }
        });
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
    public GroupingOptions ToProto(ParseResult parseResult, int groupCount) => ToProto(parseResult, GroupCountSpec.Fixed(groupCount));

    /// <summary>The request options for a count, "auto" or a range; 0 leaves a setting to the server's default.</summary>
    public GroupingOptions ToProto(ParseResult parseResult, GroupCountSpec groups)
    {
        var options = new GroupingOptions
        {
            OutlierThreshold = parseResult.GetValue(OutlierThreshold) ?? 0,
            OutlierMinimumGroupSize = parseResult.GetValue(OutlierMinimumGroupSize),
            SilhouetteSampleSize = parseResult.GetValue(SilhouetteSample),
            RestartCount = parseResult.GetValue(Restarts),
            MaxIterations = parseResult.GetValue(MaxIterations),
            TermCount = parseResult.GetValue(Terms),
            ExampleCount = parseResult.GetValue(Examples),
            IncludeBigrams = parseResult.GetValue(Bigrams),
            IncludeMap = parseResult.GetValue(Report) is not null,   // the report draws the map
        };
        groups.ApplyTo(options);
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
