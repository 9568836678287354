using System.Text.Json;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// The saved-grouping parts of <c>group --output</c>: "saved_grouping" (its name, or null) and "changes" (null
/// without --reference): the reference, document counts then and now, the minimum centre cosine, whether the run
/// started from the reference's centres, and per theme its id, kind (continued, new, faded), sizes then and now,
/// centre cosine, closest theme, top terms and the terms that rose and fell.
/// </summary>
internal static class ChangeReportJson
{
    public static void Write(Utf8JsonWriter json, GroupDocumentsResponse response)
    {
        if (response.SavedGroupingName.Length > 0)
        {
            json.WriteString("saved_grouping", response.SavedGroupingName);
        }
        else
        {
            json.WriteNull("saved_grouping");
        }

        ChangeReport? report = response.Changes;
        if (report is null)
        {
            json.WriteNull("changes");
            return;
        }

        json.WriteStartObject("changes");
        json.WriteString("reference", report.Reference);
        json.WriteNumber("reference_document_count", report.ReferenceDocumentCount);
        json.WriteNumber("document_count", report.DocumentCount);
        json.WriteNumber("min_match_similarity", report.MinMatchSimilarity);
        json.WriteBoolean("warm_started", report.WarmStarted);
        json.WriteStartArray("themes");
        foreach (ThemeChange theme in report.Themes)
        {
            json.WriteStartObject();
            json.WriteNumber("group", theme.GroupId);
            json.WriteString("kind", theme.Kind switch
            {
                ThemeChangeKind.Continued => "continued",
                ThemeChangeKind.New => "new",
                ThemeChangeKind.Faded => "faded",
                _ => "unspecified",
            });
            json.WriteNumber("size_then", theme.SizeThen);
            json.WriteNumber("size_now", theme.SizeNow);
            json.WriteNumber("centre_similarity", theme.CentreSimilarity);
            if (theme.ClosestGroupId > 0)
            {
                json.WriteNumber("closest_group", theme.ClosestGroupId);
            }
            else
            {
                json.WriteNull("closest_group");
            }

            WriteStrings(json, "terms", theme.Terms);
            WriteStrings(json, "terms_rose", theme.TermsRose);
            WriteStrings(json, "terms_fell", theme.TermsFell);
            json.WriteEndObject();
        }

        json.WriteEndArray();
        json.WriteEndObject();
    }

    private static void WriteStrings(Utf8JsonWriter json, string name, IEnumerable<string> values)
    {
        json.WriteStartArray(name);
        foreach (string value in values)
        {
            json.WriteStringValue(value);
        }

        json.WriteEndArray();
    }
}
