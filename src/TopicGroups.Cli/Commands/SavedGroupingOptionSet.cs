using System.CommandLine;
using System.Globalization;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Commands;

/// <summary>
/// The options of <c>group</c> that save a grouping or continue a saved one: --save, --replace, --reference,
/// --warm-start, --min-match, and --store for the in-process server's saved groupings.
/// </summary>
internal sealed class SavedGroupingOptionSet
{
    public Option<string?> Save { get; } = new("--save")
    {
        Description = "Save the grouping under this name (1-63 characters of a-z, 0-9 and '-'), for route, groupings show and a later --reference.",
    };

    public Option<bool> Replace { get; } = new("--replace") { Description = "With --save: replace a grouping already saved under that name." };

    public Option<string?> Reference { get; } = new("--reference")
    {
        Description = "Continue this saved grouping's themes: matching groups keep its ids, and a report lists the themes that continued, are new, or faded.",
    };

    public Option<bool> WarmStart { get; } = new("--warm-start")
    {
        Description = "With --reference: start from its centres (--groups must equal its group count, or be auto to take it).",
    };

    public Option<double?> MinMatch { get; } = new("--min-match")
    {
        Description = "With --reference: centre cosine a group needs to continue a theme, above 0 and at most 1. Default: the server's (0.7).",
    };

    public Option<string?> Store { get; } = new("--store") { Description = ServiceTarget.StoreDescription };

    public void AddTo(Command command)
    {
        command.Add(Save);
        command.Add(Replace);
        command.Add(Reference);
        command.Add(WarmStart);
        command.Add(MinMatch);
        command.Add(Store);
        MinMatch.Validators.Add(result =>
        {
            if (result.GetValueOrDefault<double?>() is double value && !(value > 0 && value <= 1))
            {
                result.AddError(string.Create(CultureInfo.InvariantCulture, $"--min-match must be above 0 and at most 1 (got {value}); the default is 0.7"));
            }
        });
        command.Validators.Add(result =>
        {
            if (result.GetValue(Replace) && result.GetValue(Save) is null)
            {
                result.AddError("--replace needs --save NAME: the name of the grouping to replace");
            }

            if ((result.GetValue(WarmStart) || result.GetValue(MinMatch) is not null) && result.GetValue(Reference) is null)
            {
                result.AddError("--warm-start and --min-match need --reference NAME: the saved grouping to continue");
            }
        });
    }

    /// <summary>Sets the save and reference fields of the request options.</summary>
    public void ApplyTo(ParseResult parseResult, GroupingOptions options)
    {
        if (parseResult.GetValue(Save) is string save)
        {
            options.SaveAs = save.StartsWith("groupings/", StringComparison.Ordinal) ? save["groupings/".Length..] : save;
            options.ReplaceSaved = parseResult.GetValue(Replace);
        }

        if (parseResult.GetValue(Reference) is string reference)
        {
            options.Reference = ServiceTarget.ResourceName(reference);
            options.WarmStart = parseResult.GetValue(WarmStart);
            options.MinMatchSimilarity = (float)(parseResult.GetValue(MinMatch) ?? 0);
        }
    }

    /// <summary>
    /// Runs <paramref name="body"/> with the server to call: <paramref name="server"/>, or, when --store is given
    /// without it, an in-process server on that store for the duration (null otherwise: the default in-process
    /// server, whose store is the per-user one).
    /// </summary>
    public async Task<int> RunAsync(ParseResult parseResult, Uri? server, Func<Uri?, Task<int>> body, CancellationToken cancellationToken)
    {
        if (server is not null || parseResult.GetValue(Store) is not string store)
        {
            return await body(server);
        }

        await using ServiceSession session = await ServiceSession.OpenAsync(null, store, cancellationToken);
        return await body(session.Address);
    }
}
