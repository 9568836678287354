using System.CommandLine;
using System.Globalization;
using TopicGroups.Cli.Input;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Commands;

/// <summary>What <c>--groups</c> asked for: a fixed Count, or Count 0 to choose within Minimum..Maximum (0 = the server's default end).</summary>
internal readonly record struct GroupCountSpec(int Count, int Minimum, int Maximum)
{
    public static GroupCountSpec Fixed(int count) => new(count, 0, 0);

    public static GroupCountSpec Auto => new(0, 0, 0);

    /// <summary>Sets group_count and, for a range, group_count_range on the request options.</summary>
    public void ApplyTo(GroupingOptions options)
    {
        options.GroupCount = Count;
        if (Count == 0 && (Minimum > 0 || Maximum > 0))
        {
            options.GroupCountRange = new GroupCountRange { Minimum = Minimum, Maximum = Maximum };
        }
    }
}

/// <summary>
/// <c>--groups</c>: a count (<c>12</c>), <c>auto</c> (the service chooses within its default range, 2 to
/// min(40, √(documents / 2))), or a range to choose within (<c>5..40</c>).
/// </summary>
internal static class GroupCountOption
{
    public const string Name = "--groups";

    public static Option<GroupCountSpec> Create(GroupCountSpec? defaultValue = null)
    {
        var option = new Option<GroupCountSpec>(Name, "-k")
        {
            Description = "Number of groups: a count (12), auto (the service chooses by silhouette within 2..min(40, √(documents/2))), "
                + "or a range to choose within (5..40). The report then shows the silhouette curve.",
            CustomParser = result =>
            {
                string text = result.Tokens.Count > 0 ? result.Tokens[^1].Value : string.Empty;
                if (TryParse(text, out GroupCountSpec spec, out string? problem))
                {
                    return spec;
                }

                result.AddError(problem!);
                return default;
            },
        };
        if (defaultValue is GroupCountSpec fallback)
        {
            option.DefaultValueFactory = _ => fallback;
        }
        else
        {
            option.Required = true;
        }

        return option;
    }

    /// <summary>Parses "12", "auto" or "5..40"; the problem names the option and the fix.</summary>
    internal static bool TryParse(string text, out GroupCountSpec spec, out string? problem)
    {
        spec = default;
        problem = null;
        string value = text.Trim();
        if (value.Equals("auto", StringComparison.OrdinalIgnoreCase))
        {
            spec = GroupCountSpec.Auto;
            return true;
        }

        int dots = value.IndexOf("..", StringComparison.Ordinal);
        if (dots < 0)
        {
            if (!int.TryParse(value, NumberStyles.None, CultureInfo.InvariantCulture, out int count) || count < 1)
            {
                problem = $"{Name} '{text}' is not a count of at least 1, 'auto', or a range like 5..40";
                return false;
            }

            spec = GroupCountSpec.Fixed(count);
            return true;
        }

        if (!int.TryParse(value[..dots], NumberStyles.None, CultureInfo.InvariantCulture, out int minimum)
            || !int.TryParse(value[(dots + 2)..], NumberStyles.None, CultureInfo.InvariantCulture, out int maximum))
        {
            problem = $"{Name} '{text}': write a range as two counts joined by '..', e.g. 5..40";
            return false;
        }

        if (minimum < 2)
        {
            problem = $"{Name} '{text}': a range starts at 2 or more (a silhouette compares each group with its nearest neighbour)";
            return false;
        }

        if (maximum < minimum)
        {
            problem = $"{Name} '{text}': the range ends below its start; write the smaller count first, e.g. {maximum}..{minimum}";
            return false;
        }

        spec = new GroupCountSpec(0, minimum, maximum);
        return true;
    }

    /// <summary>Checks the request against the batch before anything is sent; throws <see cref="InputException"/>.</summary>
    public static void CheckAgainst(GroupingOptions options, int documentCount, string fileName)
    {
        if (options.GroupCount > documentCount)
        {
            throw new InputException(
                $"{Name} {options.GroupCount} is more than the {documentCount} documents in {fileName}; ask for at most {documentCount}");
        }

        if (options.GroupCount != 0)
        {
            return;
        }

        if (documentCount < 3)
        {
            throw new InputException(
                $"{Name} auto needs at least 3 documents and {fileName} has {documentCount}; give a count from 1 to {Math.Max(documentCount, 1)}");
        }

        if (options.GroupCountRange is { } range && Math.Max(range.Minimum, range.Maximum) > documentCount - 1)
        {
            throw new InputException(
                $"{Name} {range.Minimum}..{range.Maximum} reaches past what {documentCount} documents in {fileName} allow: "
                + $"choosing tries at most {documentCount - 1} groups (one group must hold two documents)");
        }
    }
}
