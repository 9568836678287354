using System.Text.Json;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// The JSON of the choice of the group count and of the quality figures (written inside <see cref="JsonResultWriter"/>'s
/// object): "group_count_choice" (range, curve, chosen, best, reason, explanation, no-structure verdict), "quality"
/// (overall silhouette), and per group "quality" plus "suggestions". A figure the reply leaves unset is null.
/// </summary>
internal static class QualityJson
{
    public static void WriteChoice(Utf8JsonWriter json, GroupCountChoice? choice)
    {
        if (choice is null)
        {
            json.WriteNull("group_count_choice");
            return;
        }

        json.WriteStartObject("group_count_choice");
        json.WriteStartObject("range");
        json.WriteNumber("minimum", choice.Minimum);
        json.WriteNumber("maximum", choice.Maximum);
        json.WriteEndObject();
        json.WriteNumber("chosen", choice.ChosenGroupCount);
        json.WriteString("reason", choice.Reason switch
        {
            GroupCountChoiceReason.HighestSilhouette => "highest_silhouette",
            GroupCountChoiceReason.NearTieFewerGroups => "near_tie_fewer_groups",
            GroupCountChoiceReason.NoStructure => "no_structure",
            _ => "unspecified",
        });
        json.WriteString("explanation", choice.Explanation);
        json.WriteStartObject("best");
        json.WriteNumber("group_count", choice.BestGroupCount);
        json.WriteNumber("silhouette", choice.BestSilhouette);
        json.WriteEndObject();
        json.WriteBoolean("no_structure", choice.NoStructure);
        json.WriteNumber("no_structure_threshold", choice.NoStructureThreshold);
        json.WriteNumber("tie_tolerance", choice.TieTolerance);
        json.WriteNumber("candidate_documents", choice.CandidateDocumentCount);
        json.WriteNumber("silhouette_sample_size", choice.SilhouetteSampleSize);
        json.WriteNumber("seconds", choice.Seconds);
        json.WriteStartArray("curve");
        foreach (GroupCountCandidate candidate in choice.Candidates)
        {
            json.WriteStartObject();
            json.WriteNumber("group_count", candidate.GroupCount);
            json.WriteNumber("silhouette", candidate.Silhouette);
            json.WriteNumber("objective", candidate.Objective);
            json.WriteNumber("seconds", candidate.Seconds);
            json.WriteNumber("silhouette_standard_error", candidate.SilhouetteStandardError);
            json.WriteNumber("moves", candidate.Moves);
            json.WriteBoolean("warm_started", candidate.WarmStarted);
            json.WriteBoolean("chosen", candidate.GroupCount == choice.ChosenGroupCount);
            json.WriteEndObject();
        }

        json.WriteEndArray();
        json.WriteEndObject();
    }

    public static void WriteOverall(Utf8JsonWriter json, GroupingQuality? quality)
    {
        if (quality is null)
        {
            json.WriteNull("quality");
            return;
        }

        json.WriteStartObject("quality");
        WriteOptional(json, "silhouette", quality.HasSilhouette, quality.Silhouette);
        json.WriteNumber("silhouette_sample_size", quality.SampleSize);
        json.WriteBoolean("no_structure", quality.NoStructure);
        json.WriteNumber("no_structure_threshold", quality.NoStructureThreshold);
        json.WriteEndObject();
    }

    /// <summary>Inside a group's object: "quality" {silhouette, sampled members, separation} and "suggestions".</summary>
    public static void WriteGroup(Utf8JsonWriter json, Group group)
    {
        json.WriteStartObject("quality");
        WriteOptional(json, "silhouette", group.HasSilhouette, group.Silhouette);
        json.WriteNumber("silhouette_sample_count", group.SilhouetteSampleCount);
        if (group.NearestGroupId > 0)
        {
            json.WriteStartObject("separation");
            json.WriteNumber("nearest_group", group.NearestGroupId);
            json.WriteNumber("centre_similarity", group.NearestGroupSimilarity);
            json.WriteEndObject();
        }
        else
        {
            json.WriteNull("separation");
        }

        json.WriteEndObject();
        json.WriteStartArray("suggestions");
        foreach (GroupSuggestion suggestion in group.Suggestions)
        {
            json.WriteStartObject();
            switch (suggestion.Kind)
            {
                case SuggestionKind.ProbablyTwoThemes:
                    json.WriteString("kind", "probably_two_themes");
                    json.WriteString("message", suggestion.Message);
                    json.WriteNumber("cohesion", suggestion.Cohesion);
                    json.WriteStartArray("part_sizes");
                    foreach (int size in suggestion.PartSizes)
                    {
                        json.WriteNumberValue(size);
                    }

                    json.WriteEndArray();
                    json.WriteNumber("split_cohesion", suggestion.SplitCohesion);
                    json.WriteNumber("spread_removed", suggestion.SpreadRemoved);
                    json.WriteNumber("split_silhouette", suggestion.SplitSilhouette);
                    break;
                case SuggestionKind.CloseToGroup:
                    json.WriteString("kind", "close_to_group");
                    json.WriteString("message", suggestion.Message);
                    json.WriteNumber("cohesion", suggestion.Cohesion);
                    json.WriteNumber("other_group", suggestion.OtherGroupId);
                    json.WriteNumber("centre_similarity", suggestion.CentreSimilarity);
                    json.WriteNumber("pair_silhouette", suggestion.PairSilhouette);
                    break;
                default:
                    json.WriteString("kind", "unspecified");
                    json.WriteString("message", suggestion.Message);
                    break;
            }

            json.WriteEndObject();
        }

        json.WriteEndArray();
    }

    private static void WriteOptional(Utf8JsonWriter json, string name, bool present, double value)
    {
        if (present && double.IsFinite(value))
        {
            json.WriteNumber(name, value);
        }
        else
        {
            json.WriteNull(name);
        }
    }
}
