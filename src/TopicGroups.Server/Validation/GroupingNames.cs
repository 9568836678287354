using System.Text.RegularExpressions;

namespace TopicGroups.Server.Validation;

/// <summary>
/// Resource names of saved groupings, "groupings/{grouping}", and the {grouping} ids callers choose: 1-63
/// characters of a-z, 0-9 and '-', starting and ending with a letter or digit (the DNS-label form resource
/// ids commonly use), so a name is safe in a URL, a file name and a shell without quoting.
/// </summary>
internal static partial class GroupingNames
{
    public const string Collection = "groupings/";
    public const int MaxIdLength = 63;

    private const string IdRule = "1-63 characters of a-z, 0-9 and '-', starting and ending with a letter or digit";

    /// <summary>"groupings/{id}".</summary>
    public static string NameOf(string id) => Collection + id;

    /// <summary>The id in a resource name; INVALID_ARGUMENT naming <paramref name="field"/> when the name is malformed.</summary>
    public static string ParseName(string name, string field)
    {
        if (string.IsNullOrEmpty(name))
        {
            throw StatusErrors.InvalidArgument(field, "is empty; give a saved grouping's name, \"groupings/{grouping}\" (ListGroupings lists them).");
        }

        if (!name.StartsWith(Collection, StringComparison.Ordinal))
        {
            string hint = IsValidId(name) ? $" (did you mean \"{NameOf(name)}\"?)" : string.Empty;
            throw StatusErrors.InvalidArgument(field, $"is \"{Shorten(name)}\"; a grouping's name has the form \"groupings/{{grouping}}\"{hint}.");
        }

        string id = name[Collection.Length..];
        if (!IsValidId(id))
        {
            throw StatusErrors.InvalidArgument(field, $"is \"{Shorten(name)}\"; the part after \"groupings/\" must be {IdRule}.");
        }

        return id;
    }

    /// <summary>Checks an id a caller chose (save_as); INVALID_ARGUMENT naming <paramref name="field"/> when malformed.</summary>
    public static string CheckId(string id, string field)
    {
        if (!IsValidId(id))
        {
            string hint = id.StartsWith(Collection, StringComparison.Ordinal) ? " Give the id alone, without \"groupings/\"." : string.Empty;
            throw StatusErrors.InvalidArgument(field, $"is \"{Shorten(id)}\"; it must be {IdRule}, e.g. \"tickets-2026-w48\".{hint}");
        }

        return id;
    }

    public static bool IsValidId(string id) => id.Length is > 0 and <= MaxIdLength && IdPattern().IsMatch(id);

    /// <summary>An id for a grouping saved without one: grouping-YYYYMMDD-HHMMSS-xxxx (UTC, 4 random hex digits).</summary>
    public static string MakeId(DateTimeOffset now) =>
        $"grouping-{now.UtcDateTime:yyyyMMdd-HHmmss}-{Random.Shared.Next(0x10000):x4}";

    private static string Shorten(string text) => text.Length <= 80 ? text : text[..77] + "...";

    [GeneratedRegex("^[a-z0-9]([a-z0-9-]*[a-z0-9])?$", RegexOptions.CultureInvariant)]
    private static partial Regex IdPattern();
}
