using System.Globalization;
using System.Text;
using System.Text.Encodings.Web;
using System.Text.Json;
using System.Text.Unicode;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>Where the report's documents came from, for its title, and how many points its map may draw.</summary>
internal sealed record HtmlReportSource(string InputName, DateTimeOffset Created)
{
    /// <value>The default is 3,000 points (<see cref="MapPointSample.DefaultLimit"/>).</value>
    public int MapPointLimit { get; init; } = MapPointSample.DefaultLimit;
}

/// <summary>
/// The result as one self-contained HTML file for people who would rather look than read a table: key figures,
/// group sizes as bars, a 2-D map of the documents (from the service's map coordinates), each group's terms,
/// examples, quality figures and suggestions, how the number of groups was chosen, what changed since a reference
/// grouping, and the outliers to review. Inline CSS and a small inline script; SVG for the charts; no network.
/// Every piece of text from the input or the service is escaped (<see cref="HtmlText"/>, or JSON with HTML-sensitive
/// characters escaped inside the data block).
/// </summary>
internal static class HtmlReport
{
    /// <summary>Characters of each example shown in a group (the full text is in the JSON output).</summary>
    public const int ExampleLength = 420;

    /// <summary>Characters of each document's text kept for the map's reading panel.</summary>
    public const int PointTextLength = 1_200;

    /// <summary>Outliers listed at most; the CSV and JSON outputs list them all.</summary>
    public const int OutliersListed = 300;

    private const int OutlierTextLength = 300;
    private const int TermsInLabel = 3;

    private static readonly CultureInfo Invariant = CultureInfo.InvariantCulture;

    // Escapes <, >, &, quotes and control characters (so the data block cannot close its script element) but keeps
    // letters of every script readable.
    private static readonly JsonWriterOptions DataJson = new() { Encoder = JavaScriptEncoder.Create(UnicodeRanges.All) };

    public static void Write(string path, GroupDocumentsResponse response, IReadOnlyList<Document> documents, HtmlReportSource source)
    {
        using var stream = new FileStream(path, FileMode.Create, FileAccess.Write, FileShare.None, bufferSize: 1 << 16);
        using var writer = new StreamWriter(stream, new UTF8Encoding(encoderShouldEmitUTF8Identifier: false));
        Write(writer, response, documents, source);
    }

    /// <param name="writer">Receives the HTML.</param>
    /// <param name="response">The service's reply.</param>
    /// <param name="documents">The documents sent, in the same order as response.documents (their texts fill the map's panel).</param>
    /// <param name="source">Title and limits.</param>
    public static void Write(TextWriter writer, GroupDocumentsResponse response, IReadOnlyList<Document> documents, HtmlReportSource source)
    {
        var report = new ReportModel(response, documents);
        var html = new StringBuilder(64 * 1024);
        html.Append("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n")
            .Append("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n")
            .Append("<title>Themes in ").Append(HtmlText.Encode(source.InputName)).Append(" \u2014 TopicGroups report</title>\n")
            .Append("<style>\n").Append(HtmlReportAssets.Style).Append(ReportPalette.ColourRules()).Append(FocusRules(report)).Append("</style>\n")
            .Append("</head>\n<body>\n");
        html.Append("<svg width=\"0\" height=\"0\" style=\"position:absolute\" aria-hidden=\"true\"><defs>")
            .Append(ReportPalette.SymbolDefinitions()).Append("</defs></svg>\n");

        WriteHeader(html, report, source);
        html.Append("<main>\n");
        WriteSizes(html, report);
        int[] drawn = WriteMap(html, report, source);
        WriteGroups(html, report);
        WriteGroupCountChoice(html, report);
        WriteChanges(html, report);
        WriteOutliers(html, report);
        WriteAbout(html, report);
        html.Append("</main>\n<footer>Made by TopicGroups on ")
            .Append(source.Created.UtcDateTime.ToString("yyyy-MM-dd HH:mm 'UTC'", Invariant))
            .Append(". This file needs no network: it can be mailed, archived or printed as it is.</footer>\n");

        html.Append("<script type=\"application/json\" id=\"report-data\">");
        writer.Write(html);
        html.Clear();
        writer.Write(DataBlock(report, drawn));
        html.Append("</script>\n<script>\n").Append(HtmlReportAssets.Script).Append("</script>\n</body>\n</html>\n");
        writer.Write(html);
    }

    /// <summary>The reply rearranged for display: groups largest first, each with its colour and shape.</summary>
    private sealed class ReportModel
    {
        public ReportModel(GroupDocumentsResponse response, IReadOnlyList<Document> documents)
        {
            if (documents.Count != response.Documents.Count)
            {
                throw new ArgumentException(
                    $"{documents.Count} documents but the reply places {response.Documents.Count}; pass the documents that were sent, in order.",
                    nameof(documents));
            }

            Response = response;
            Documents = documents;
            Statistics = response.Statistics ?? new RunStatistics();
            DocumentCount = Statistics.DocumentCount > 0 ? Statistics.DocumentCount : response.Documents.Count;
            Groups = response.Groups.Select((group, index) => (group, index))
                .OrderByDescending(g => g.group.Size).ThenBy(g => g.group.Id)
                .Select(g => g.index).ToArray();
            DisplayOfId = new Dictionary<int, int>();
            for (int display = 0; display < Groups.Length; display++)
            {
                DisplayOfId[response.Groups[Groups[display]].Id] = display;
            }

            Changes = response.Changes?.Themes.Where(t => t.Kind != ThemeChangeKind.Faded).ToDictionary(t => t.GroupId) ?? [];
        }

        public GroupDocumentsResponse Response { get; }

        public IReadOnlyList<Document> Documents { get; }

        public RunStatistics Statistics { get; }

        public int DocumentCount { get; }

        /// <summary>Groups[display] is the index in response.groups of the display-th group (largest first).</summary>
        public int[] Groups { get; }

        public Dictionary<int, int> DisplayOfId { get; }

        /// <summary>For a reply with a change report: the change of each current group, by id.</summary>
        public Dictionary<int, ThemeChange> Changes { get; }

        public Group Group(int display) => Response.Groups[Groups[display]];

        public string Label(int display) => "Group " + Group(display).Id.ToString(Invariant);

        public string Terms(int display, int count) => string.Join(", ", Group(display).Terms.Take(count).Select(t => t.Term));

        public int DisplayOfPlacement(DocumentPlacement placement) =>
            DisplayOfId.TryGetValue(placement.GroupId, out int display) ? display : 0;
    }

    private static string FocusRules(ReportModel report)
    {
        var rules = new StringBuilder();
        for (int display = 0; display < report.Groups.Length; display++)
        {
            rules.Append(Invariant, $"#map[data-focus=\"{display}\"] .p:not(.g{display}){{opacity:.1}}\n");
        }

        return rules.ToString();
    }

    private static string Mark(int display, string extraClass = "") =>
        string.Create(Invariant,
            $"<svg class=\"mark{extraClass}\" viewBox=\"-5 -5 10 10\" aria-hidden=\"true\"><use href=\"#shape-{ReportPalette.ShapeIndex(display)}\" class=\"c{ReportPalette.ColourIndex(display)}\"/></svg>");

    private static void WriteHeader(StringBuilder html, ReportModel report, HtmlReportSource source)
    {
        GroupDocumentsResponse response = report.Response;
        int outliers = response.Documents.Count(d => d.IsOutlier);
        html.Append("<header class=\"top\">\n<h1>Themes in ").Append(HtmlText.Encode(source.InputName)).Append("</h1>\n")
            .Append(Invariant, $"<p class=\"sub\">{report.DocumentCount:N0} documents grouped into {report.Groups.Length:N0} themes")
            .Append(" \u00b7 ").Append(source.Created.UtcDateTime.ToString("d MMMM yyyy, HH:mm 'UTC'", Invariant)).Append("</p>\n");

        html.Append("<ul class=\"figures\">\n")
            .Append(Invariant, $"<li><b>{report.DocumentCount:N0}</b><span>documents</span></li>\n")
            .Append(Invariant, $"<li><b>{report.Groups.Length:N0}</b><span>groups (themes)</span></li>\n")
            .Append(Invariant, $"<li><b>{outliers:N0}</b><span>outliers to review</span></li>\n");
        if (response.Quality is { HasSilhouette: true } quality)
        {
            html.Append(Invariant, $"<li><b>{quality.Silhouette:F2}</b><span>overall fit (silhouette, \u22121 to 1)</span></li>\n");
        }

        if (response.Changes is { } changes)
        {
            int fresh = changes.Themes.Count(t => t.Kind == ThemeChangeKind.New);
            int faded = changes.Themes.Count(t => t.Kind == ThemeChangeKind.Faded);
            html.Append(Invariant, $"<li><b>{fresh:N0} new \u00b7 {faded:N0} faded</b><span>since {HtmlText.Encode(ShortReference(changes.Reference))}</span></li>\n");
        }

        html.Append("</ul>\n");
        html.Append("<p class=\"small muted\">Vectors: ")
            .Append(report.Statistics.EmbeddingModel.Length > 0
                ? "made by the service from the texts with " + HtmlText.Encode(report.Statistics.EmbeddingModel)
                : string.Create(Invariant, $"sent with the documents ({report.Statistics.Dimensions:N0} dimensions)"))
            .Append(report.Statistics.EmbeddingModel.Length > 0
                ? string.Create(Invariant, $". Embedding took {report.Statistics.EmbeddingSeconds:F1} s, grouping {report.Statistics.Seconds:F1} s.</p>\n")
                : string.Create(Invariant, $". Grouping took {report.Statistics.Seconds:F1} s.</p>\n"));

        if (response.Quality is { NoStructure: true } || response.GroupCountChoice is { NoStructure: true })
        {
            html.Append("<p class=\"note\"><b>These groups may not be real themes.</b> The documents are spread almost evenly: ")
                .Append("no way of cutting them into groups fits much better than another (the overall fit is below ")
                .Append(Invariant, $"{Math.Max(response.Quality?.NoStructureThreshold ?? 0, response.GroupCountChoice?.NoStructureThreshold ?? 0):F2}). ")
                .Append("Read the groups as slices of one broad subject.</p>\n");
        }

        if (report.Statistics.TruncatedTextCount > 0)
        {
            html.Append(Invariant, $"<p class=\"note plain\">{report.Statistics.TruncatedTextCount:N0} texts were longer than the model reads ")
                .Append("(512 word pieces): only their beginning counted for the grouping.</p>\n");
        }

        html.Append("<nav class=\"contents\" aria-label=\"Contents\"><a href=\"#sizes\">Group sizes</a><a href=\"#map-section\">Map</a><a href=\"#groups\">Groups</a>");
        if (response.GroupCountChoice is not null)
        {
            html.Append("<a href=\"#choice\">Number of groups</a>");
        }

        if (response.Changes is not null)
        {
            html.Append("<a href=\"#changes\">Changes</a>");
        }

        html.Append("<a href=\"#outliers\">Outliers</a><a href=\"#about\">How this was made</a></nav>\n</header>\n");
    }

    private static void WriteSizes(StringBuilder html, ReportModel report)
    {
        const int rowHeight = 30;
        const int labelWidth = 330;
        const int barArea = 520;
        const int width = labelWidth + barArea + 150;
        int largest = Math.Max(1, report.Groups.Length > 0 ? report.Group(0).Size : 1);
        int height = Math.Max(1, report.Groups.Length) * rowHeight + 8;

        html.Append("<section id=\"sizes\">\n<h2>Group sizes</h2>\n")
            .Append("<p class=\"lead\">Each bar is one group: documents whose meaning is close. The words beside it are those that ")
            .Append("set the group apart from the rest. Select a group to read it.</p>\n")
            .Append(Invariant, $"<svg class=\"bars\" viewBox=\"0 0 {width} {height}\" role=\"img\" aria-label=\"Number of documents in each group\">\n");
        for (int display = 0; display < report.Groups.Length; display++)
        {
            Group group = report.Group(display);
            int y = display * rowHeight + 4;
            double barLength = Math.Max(2.0, barArea * (double)group.Size / largest);
            double share = report.DocumentCount > 0 ? 100.0 * group.Size / report.DocumentCount : 0;
            string terms = HtmlText.Shorten(report.Terms(display, TermsInLabel), 34);
            html.Append(Invariant, $"<a href=\"#group-{group.Id}\"><title>{HtmlText.Encode(report.Label(display))}: {group.Size:N0} documents</title>")
                .Append(Invariant, $"<use href=\"#shape-{ReportPalette.ShapeIndex(display)}\" class=\"c{ReportPalette.ColourIndex(display)} mk\" transform=\"translate(9 {y + 11}) scale(1.5)\"/>")
                .Append(Invariant, $"<text class=\"label\" x=\"20\" y=\"{y + 16}\" font-size=\"14\"><tspan font-weight=\"600\">{HtmlText.Encode(report.Label(display))}</tspan>")
                .Append(Invariant, $"<tspan x=\"108\" fill=\"#5b636b\">{HtmlText.Encode(terms)}</tspan></text>")
                .Append(Invariant, $"<rect class=\"bar c{ReportPalette.ColourIndex(display)}\" x=\"{labelWidth}\" y=\"{y + 4}\" width=\"{barLength:F1}\" height=\"{rowHeight - 12}\" rx=\"2\"/>")
                .Append(Invariant, $"<text x=\"{labelWidth + barLength + 8:F1}\" y=\"{y + 16}\" font-size=\"13\">{group.Size:N0} ({share:F1}%)</text></a>\n");
        }

        html.Append("</svg>\n</section>\n");
    }

    /// <summary>The map section; returns the documents drawn (indexes into the batch), which the data block describes.</summary>
    private static int[] WriteMap(StringBuilder html, ReportModel report, HtmlReportSource source)
    {
        GroupDocumentsResponse response = report.Response;
        html.Append("<section id=\"map-section\">\n<h2>Map of the documents</h2>\n");
        if (response.Map is null || response.Documents.Count == 0)
        {
            html.Append("<p class=\"note plain\">The service sent no map coordinates (it may be older than this report, ")
                .Append("or the batch was empty). The groups below are complete without it.</p>\n</section>\n");
            return [];
        }

        int[] groupOf = response.Documents.Select(report.DisplayOfPlacement).ToArray();
        int[] drawn = MapPointSample.Select(groupOf, report.Groups.Length, source.MapPointLimit);
        DocumentMap map = response.Map;

        html.Append("<p class=\"lead\">Each dot is a document, placed so that documents with similar meaning tend to sit together. ")
            .Append("Colour and shape show its group; numbered circles mark group centres. Point at a dot to read it, click to keep it, ")
            .Append("or pick a group below the map to highlight it.</p>\n");

        // Equal scales on both axes, so distances on the map are not stretched one way.
        const double width = 760, height = 500, pad = 22;
        float minX = float.MaxValue, maxX = float.MinValue, minY = float.MaxValue, maxY = float.MinValue;
        foreach (DocumentPlacement placement in response.Documents)
        {
            minX = Math.Min(minX, placement.MapX);
            maxX = Math.Max(maxX, placement.MapX);
            minY = Math.Min(minY, placement.MapY);
            maxY = Math.Max(maxY, placement.MapY);
        }

        double spanX = Math.Max(maxX - minX, 1e-6), spanY = Math.Max(maxY - minY, 1e-6);
        double scale = Math.Min((width - 2 * pad) / spanX, (height - 2 * pad) / spanY);
        double offsetX = (width - scale * spanX) / 2, offsetY = (height - scale * spanY) / 2;
        double X(float x) => offsetX + (x - minX) * scale;
        double Y(float y) => height - (offsetY + (y - minY) * scale);   // up is up

        html.Append("<div class=\"map-wrap\">\n<div>\n")
            .Append(Invariant, $"<svg id=\"map\" class=\"map\" viewBox=\"0 0 {width} {height}\" role=\"img\" aria-label=\"Map of {drawn.Length:N0} documents coloured by group\">\n")
            .Append(Invariant, $"<line class=\"axis\" x1=\"{pad / 2}\" y1=\"{Y(0):F1}\" x2=\"{width - pad / 2}\" y2=\"{Y(0):F1}\"/>")
            .Append(Invariant, $"<line class=\"axis\" x1=\"{X(0):F1}\" y1=\"{pad / 2}\" x2=\"{X(0):F1}\" y2=\"{height - pad / 2}\"/>\n");
        html.Append("<g class=\"points\">\n");
        for (int p = 0; p < drawn.Length; p++)
        {
            DocumentPlacement placement = response.Documents[drawn[p]];
            int display = groupOf[drawn[p]];
            html.Append(Invariant,
                $"<use href=\"#shape-{ReportPalette.ShapeIndex(display)}\" class=\"p g{display} c{ReportPalette.ColourIndex(display)}{(placement.IsOutlier ? " out" : "")}\" x=\"{X(placement.MapX):F1}\" y=\"{Y(placement.MapY):F1}\" data-i=\"{p}\"/>\n");
        }

        html.Append("</g>\n<g class=\"centres\" aria-hidden=\"true\">\n");
        for (int display = 0; display < report.Groups.Length && report.Groups[display] < map.GroupCentres.Count; display++)
        {
            MapPoint centre = map.GroupCentres[report.Groups[display]];
            html.Append(Invariant, $"<g class=\"centre\"><circle cx=\"{X(centre.X):F1}\" cy=\"{Y(centre.Y):F1}\" r=\"9\"/>")
                .Append(Invariant, $"<text x=\"{X(centre.X):F1}\" y=\"{Y(centre.Y):F1}\">{report.Group(display).Id}</text></g>\n");
        }

        html.Append("</g>\n<circle id=\"ring\" r=\"7\" visibility=\"hidden\"/>\n")
            .Append(Invariant, $"<text class=\"axis-label\" x=\"{width - pad / 2}\" y=\"{height - 6}\" text-anchor=\"end\">first principal axis: {100 * map.XVarianceShare:F0}% of the spread \u2192</text>\n")
            .Append(Invariant, $"<text class=\"axis-label\" transform=\"translate(14 {pad / 2}) rotate(-90)\" text-anchor=\"end\">second axis: {100 * map.YVarianceShare:F0}% of the spread \u2192</text>\n")
            .Append("</svg>\n<ul class=\"legend\" aria-label=\"Highlight a group on the map\">\n");
        for (int display = 0; display < report.Groups.Length; display++)
        {
            html.Append(Invariant, $"<li><button type=\"button\" data-g=\"{display}\" aria-pressed=\"false\">{Mark(display)}{HtmlText.Encode(report.Label(display))}</button></li>\n");
        }

        html.Append("</ul>\n</div>\n<aside class=\"panel\" aria-live=\"polite\">\n")
            .Append("<p id=\"panel-hint\" class=\"muted\">Point at a dot to read its document here; click it to keep it. Esc clears.</p>\n")
            .Append("<div id=\"panel-body\" hidden>\n<p class=\"panel-group\"><svg class=\"mark\" viewBox=\"-5 -5 10 10\" aria-hidden=\"true\"><use id=\"panel-mark\" href=\"#shape-0\" class=\"c0\"/></svg><span id=\"panel-group\"></span></p>\n")
            .Append("<p class=\"small muted\"><span id=\"panel-id\"></span> \u00b7 similarity to centre <span id=\"panel-similarity\"></span> <b id=\"panel-flag\"></b></p>\n")
            .Append("<p id=\"panel-text\" class=\"panel-text\"></p>\n</div>\n</aside>\n</div>\n");

        html.Append(Invariant, $"<p class=\"small muted\">How to read it: the map flattens the documents' meaning onto two axes that keep {100 * (map.XVarianceShare + map.YVarianceShare):F0}% of the spread between them. ")
            .Append("Groups far apart here are truly different; groups that overlap here may still be distinct. Dots with a dark ring are outliers.");
        if (drawn.Length < response.Documents.Count)
        {
            html.Append(Invariant, $" The map shows {drawn.Length:N0} of {response.Documents.Count:N0} documents: a fixed sample in which every group keeps its share and small groups keep up to {MapPointSample.WholeGroupSize} members; the same input always shows the same dots.");
        }

        html.Append("</p>\n</section>\n");
        return drawn;
    }

    private static void WriteGroups(StringBuilder html, ReportModel report)
    {
        GroupDocumentsResponse response = report.Response;
        html.Append("<section id=\"groups\">\n<h2>The groups</h2>\n")
            .Append("<p class=\"lead\">Largest first. <b>Terms</b> are the words that most set a group apart (bars show their weight). ")
            .Append("<b>Examples</b> are the documents nearest the group's centre: the most typical ones. ")
            .Append("<b>Cohesion</b> is how alike its documents are (0 to 1, higher is tighter).</p>\n<div class=\"groups\">\n");
        for (int display = 0; display < report.Groups.Length; display++)
        {
            Group group = report.Group(display);
            double share = report.DocumentCount > 0 ? 100.0 * group.Size / report.DocumentCount : 0;
            html.Append(Invariant, $"<article class=\"group\" id=\"group-{group.Id}\">\n<header>{Mark(display)}<h3>{HtmlText.Encode(report.Label(display))}</h3>")
                .Append(Invariant, $"<span class=\"summary\">{HtmlText.Encode(report.Terms(display, TermsInLabel))}</span>");
            if (report.Changes.TryGetValue(group.Id, out ThemeChange? change))
            {
                html.Append(change.Kind == ThemeChangeKind.New
                    ? "<span class=\"badge new\">new theme</span>"
                    : string.Create(Invariant, $"<span class=\"badge continued\">continued: {change.SizeThen:N0} \u2192 {change.SizeNow:N0}</span>"));
            }

            html.Append("</header>\n<dl class=\"figs\">")
                .Append(Invariant, $"<div><dt>documents</dt><dd>{group.Size:N0} ({share:F1}%)</dd></div>")
                .Append(Invariant, $"<div><dt>cohesion</dt><dd>{group.Cohesion:F2}</dd></div>");
            if (group.HasSilhouette)
            {
                html.Append(Invariant, $"<div><dt>fit (silhouette)</dt><dd>{group.Silhouette:F2}</dd></div>");
            }

            if (group.NearestGroupId > 0)
            {
                html.Append(Invariant, $"<div><dt>closest group</dt><dd><a href=\"#group-{group.NearestGroupId}\">Group {group.NearestGroupId}</a> ({group.NearestGroupSimilarity:F2})</dd></div>");
            }

            html.Append(Invariant, $"<div><dt>outliers</dt><dd>{group.OutlierCount:N0}</dd></div></dl>\n");
            foreach (GroupSuggestion suggestion in group.Suggestions)
            {
                html.Append("<p class=\"note\"><b>").Append(suggestion.Kind switch
                {
                    SuggestionKind.ProbablyTwoThemes => "May be two themes.",
                    SuggestionKind.CloseToGroup => "Close to another group.",
                    _ => "Worth a look.",
                }).Append("</b> ").Append(HtmlText.Encode(suggestion.Message)).Append("</p>\n");
            }

            html.Append("<div class=\"cols\">\n<div>\n<table class=\"terms\"><thead><tr><th>Term</th><th class=\"num\">Weight</th></tr></thead><tbody>\n");
            double topWeight = group.Terms.Count > 0 ? Math.Max(group.Terms.Max(t => t.Weight), 1e-9) : 1;
            foreach (WeightedTerm term in group.Terms)
            {
                html.Append(Invariant, $"<tr><td>{HtmlText.Encode(term.Term)}</td><td class=\"num\"><span class=\"wbar\" style=\"width:{Math.Max(2, 60 * term.Weight / topWeight):F0}px\"></span> {term.Weight:F2}</td></tr>\n");
            }

            if (group.Terms.Count == 0)
            {
                html.Append("<tr><td colspan=\"2\" class=\"muted\">No terms: the texts are empty or only common words.</td></tr>\n");
            }

            html.Append("</tbody></table>\n</div>\n<div>\n<ul class=\"examples\">\n");
            foreach (GroupExample example in group.Examples)
            {
                html.Append("<li>").Append(HtmlText.Encode(HtmlText.Shorten(example.Text, ExampleLength)))
                    .Append(Invariant, $"<span class=\"meta\">{HtmlText.Encode(example.DocumentId)} \u00b7 similarity {example.Similarity:F2}</span></li>\n");
            }

            html.Append("</ul>\n</div>\n</div>\n</article>\n");
        }

        html.Append("</div>\n</section>\n");
    }

    private static void WriteGroupCountChoice(StringBuilder html, ReportModel report)
    {
        if (report.Response.GroupCountChoice is not { } choice || choice.Candidates.Count == 0)
        {
            return;
        }

        html.Append("<section id=\"choice\">\n<h2>How many groups</h2>\n")
            .Append("<p class=\"lead\">The service tried several numbers of groups and scored each by how well documents fit their own group ")
            .Append("compared with the next-best one (mean silhouette, higher is better).</p>\n");

        const double width = 720, height = 240, left = 48, right = 16, top = 14, bottom = 34;
        GroupCountCandidate[] candidates = choice.Candidates.OrderBy(c => c.GroupCount).ToArray();
        int minCount = candidates[0].GroupCount, maxCount = candidates[^1].GroupCount;
        double low = Math.Min(0, candidates.Min(c => c.Silhouette)), high = Math.Max(candidates.Max(c => c.Silhouette), 0.05) * 1.15;
        const double inset = 14;   // keeps the end points clear of the axis labels
        double X(int count) => left + inset + (maxCount == minCount ? 0.5 : (double)(count - minCount) / (maxCount - minCount)) * (width - left - right - 2 * inset);
        double Y(double value) => top + (high - value) / (high - low) * (height - top - bottom);

        html.Append(Invariant, $"<svg class=\"curve\" viewBox=\"0 0 {width} {height}\" role=\"img\" aria-label=\"Mean silhouette for each number of groups tried\">\n");
        for (int tick = 0; tick <= 4; tick++)
        {
            double value = low + (high - low) * tick / 4;
            html.Append(Invariant, $"<line class=\"grid\" x1=\"{left}\" x2=\"{width - right}\" y1=\"{Y(value):F1}\" y2=\"{Y(value):F1}\"/><text x=\"{left - 6}\" y=\"{Y(value) + 4:F1}\" text-anchor=\"end\">{value:F2}</text>\n");
        }

        html.Append("<polyline class=\"line\" points=\"")
            .AppendJoin(' ', candidates.Select(c => string.Create(Invariant, $"{X(c.GroupCount):F1},{Y(c.Silhouette):F1}"))).Append("\"/>\n");
        foreach (GroupCountCandidate candidate in candidates)
        {
            bool chosen = candidate.GroupCount == choice.ChosenGroupCount;
            html.Append(Invariant, $"<circle class=\"{(chosen ? "chosen" : "dot")}\" cx=\"{X(candidate.GroupCount):F1}\" cy=\"{Y(candidate.Silhouette):F1}\" r=\"{(chosen ? 6 : 3.5)}\"><title>{candidate.GroupCount} groups: silhouette {candidate.Silhouette:F3}</title></circle>\n")
                .Append(Invariant, $"<text x=\"{X(candidate.GroupCount):F1}\" y=\"{height - bottom + 16}\" text-anchor=\"middle\">{candidate.GroupCount}</text>\n");
        }

        html.Append(Invariant, $"<text x=\"{(left + width - right) / 2:F0}\" y=\"{height - 4}\" text-anchor=\"middle\">number of groups (chosen: {choice.ChosenGroupCount})</text>\n</svg>\n")
            .Append("<p>").Append(HtmlText.Encode(choice.Explanation)).Append("</p>\n</section>\n");
    }

    private static void WriteChanges(StringBuilder html, ReportModel report)
    {
        if (report.Response.Changes is not { } changes)
        {
            return;
        }

        html.Append("<section id=\"changes\">\n<h2>What changed</h2>\n")
            .Append(Invariant, $"<p class=\"lead\">Compared with {HtmlText.Encode(ShortReference(changes.Reference))} ({changes.ReferenceDocumentCount:N0} documents then, {changes.DocumentCount:N0} now). ")
            .Append(Invariant, $"A theme continues when its centre is close to one of the earlier themes (cosine at least {changes.MinMatchSimilarity:F2}); it keeps that theme's number.</p>\n")
            .Append("<table><thead><tr><th>Theme</th><th>Status</th><th class=\"num\">Then</th><th class=\"num\">Now</th><th class=\"num\">Change</th><th>Terms</th></tr></thead><tbody>\n");
        foreach (ThemeChange theme in changes.Themes)
        {
            int change = theme.SizeNow - theme.SizeThen;
            string status = theme.Kind switch
            {
                ThemeChangeKind.Continued => string.Create(Invariant, $"continued (centre similarity {theme.CentreSimilarity:F2})"),
                ThemeChangeKind.New => theme.ClosestGroupId > 0 ? $"new (closest earlier theme: {theme.ClosestGroupId})" : "new",
                ThemeChangeKind.Faded => theme.ClosestGroupId > 0 ? $"faded (closest theme now: {theme.ClosestGroupId})" : "faded",
                _ => "unknown",
            };
            string name = report.DisplayOfId.TryGetValue(theme.GroupId, out int display) && theme.Kind != ThemeChangeKind.Faded
                ? string.Create(Invariant, $"{Mark(display)}<a href=\"#group-{theme.GroupId}\">Group {theme.GroupId}</a>")
                : string.Create(Invariant, $"Group {theme.GroupId}");
            html.Append("<tr><td class=\"nowrap\">").Append(name).Append("</td><td>").Append(HtmlText.Encode(status)).Append("</td>")
                .Append(Invariant, $"<td class=\"num\">{theme.SizeThen:N0}</td><td class=\"num\">{theme.SizeNow:N0}</td>")
                .Append(Invariant, $"<td class=\"num {(change > 0 ? "change-up" : change < 0 ? "change-down" : "")}\">{(change > 0 ? "+" : "")}{change:N0}</td><td>")
                .Append(HtmlText.Encode(string.Join(", ", theme.Terms.Take(5))));
            if (theme.TermsRose.Count > 0)
            {
                html.Append("<br><span class=\"small muted\">new among its terms: ").Append(HtmlText.Encode(string.Join(", ", theme.TermsRose))).Append("</span>");
            }

            if (theme.TermsFell.Count > 0)
            {
                html.Append("<br><span class=\"small muted\">no longer among them: ").Append(HtmlText.Encode(string.Join(", ", theme.TermsFell))).Append("</span>");
            }

            html.Append("</td></tr>\n");
        }

        html.Append("</tbody></table>\n</section>\n");
    }

    private static void WriteOutliers(StringBuilder html, ReportModel report)
    {
        GroupDocumentsResponse response = report.Response;
        var outliers = Enumerable.Range(0, response.Documents.Count)
            .Where(i => response.Documents[i].IsOutlier)
            .OrderBy(i => report.DisplayOfPlacement(response.Documents[i]))
            .ThenBy(i => response.Documents[i].Similarity)
            .ToList();
        html.Append("<section id=\"outliers\">\n<h2>Documents to review</h2>\n")
            .Append("<p class=\"lead\">These documents sit far from the centre of their group compared with its other members. ")
            .Append("They may be one-offs, mistakes, or the first signs of a new theme: a person should read them.</p>\n");
        if (outliers.Count == 0)
        {
            html.Append("<p>None were flagged.</p>\n</section>\n");
            return;
        }

        html.Append("<table class=\"outliers\"><thead><tr><th>Document</th><th>Group</th><th class=\"num\">Similarity</th><th class=\"num\">Group cohesion</th><th>Text</th></tr></thead><tbody>\n");
        foreach (int i in outliers.Take(OutliersListed))
        {
            DocumentPlacement placement = response.Documents[i];
            int display = report.DisplayOfPlacement(placement);
            html.Append("<tr><td>").Append(HtmlText.Encode(placement.DocumentId)).Append("</td>")
                .Append(Invariant, $"<td class=\"nowrap\">{Mark(display)}<a href=\"#group-{placement.GroupId}\">{placement.GroupId}</a></td>")
                .Append(Invariant, $"<td class=\"num\">{placement.Similarity:F2}</td><td class=\"num\">{report.Group(display).Cohesion:F2}</td>")
                .Append("<td class=\"text\">").Append(HtmlText.Encode(HtmlText.Shorten(report.Documents[i].Text, OutlierTextLength))).Append("</td></tr>\n");
        }

        html.Append("</tbody></table>\n");
        if (outliers.Count > OutliersListed)
        {
            html.Append(Invariant, $"<p class=\"small muted\">The first {OutliersListed:N0} of {outliers.Count:N0} are listed; the CSV output (--csv) marks every one.</p>\n");
        }

        html.Append("</section>\n");
    }

    private static void WriteAbout(StringBuilder html, ReportModel report)
    {
        RunStatistics statistics = report.Statistics;
        html.Append("<section id=\"about\">\n<h2>How this was made</h2>\n<ul>\n")
            .Append("<li>Each document's meaning is a vector (an embedding); documents with similar meaning have vectors pointing the same way. ")
            .Append(statistics.EmbeddingModel.Length > 0
                ? "Here the service made them from the texts with " + HtmlText.Encode(statistics.EmbeddingModel) + "."
                : "Here they came with the documents.")
            .Append("</li>\n")
            .Append(Invariant, $"<li>Groups come from spherical k-means (Dhillon &amp; Modha, 2001): {report.Groups.Length} centres, each document joined to the centre it is most similar to; ")
            .Append(Invariant, $"{statistics.RestartCount} restarts, the best kept; {statistics.Iterations} iterations{(statistics.Converged ? ", settled" : ", stopped at the limit")}. ")
            .Append("The same input and seed always give the same groups.</li>\n")
            .Append("<li><b>Similarity</b> is the cosine between a document's vector and its group's centre (1 = same direction). ")
            .Append("<b>Cohesion</b> is a group's mean similarity. <b>Fit (silhouette)</b> compares how close documents are to their own group and to the next ")
            .Append("(Rousseeuw, 1987): near 1 is clear-cut, near 0 means groups blend. <b>Closest group</b> gives the cosine between two centres.</li>\n")
            .Append("<li><b>Terms</b> are weighted by TF-IDF: frequent in the group, rare elsewhere (Manning, Raghavan &amp; Sch\u00fctze, 2008).</li>\n")
            .Append("<li><b>Outliers</b> have a similarity far below their group's usual, judged by a robust z-score (Iglewicz &amp; Hoaglin, 1993).</li>\n")
            .Append("<li>The <b>map</b> shows the first two principal components of the documents' unit vectors (Pearson, 1901), computed by the service.</li>\n")
            .Append("<li>Colours: the palette of Okabe &amp; Ito (2008), chosen to stay distinct for readers with colour-vision deficiencies; ")
            .Append("from the ninth group on, marker shapes change as well.</li>\n</ul>\n</section>\n");
    }

    /// <summary>The JSON the script reads: each group's label, and each drawn point's group, id, text, similarity and flag.</summary>
    private static string DataBlock(ReportModel report, int[] drawn)
    {
        using var buffer = new MemoryStream();
        using (var json = new Utf8JsonWriter(buffer, DataJson))
        {
            json.WriteStartObject();
            json.WriteStartArray("groups");
            for (int display = 0; display < report.Groups.Length; display++)
            {
                json.WriteStartObject();
                json.WriteString("label", report.Label(display));
                json.WriteString("terms", report.Terms(display, TermsInLabel));
                json.WriteNumber("c", ReportPalette.ColourIndex(display));
                json.WriteNumber("s", ReportPalette.ShapeIndex(display));
                json.WriteEndObject();
            }

            json.WriteEndArray();
            json.WriteStartArray("points");
            foreach (int i in drawn)
            {
                DocumentPlacement placement = report.Response.Documents[i];
                json.WriteStartArray();
                json.WriteNumberValue(report.DisplayOfPlacement(placement));
                json.WriteStringValue(placement.DocumentId);
                json.WriteStringValue(Truncate(report.Documents[i].Text, PointTextLength));
                json.WriteNumberValue(Math.Round(placement.Similarity, 3));
                json.WriteNumberValue(placement.IsOutlier ? 1 : 0);
                json.WriteEndArray();
            }

            json.WriteEndArray();
            json.WriteEndObject();
        }

        return Encoding.UTF8.GetString(buffer.GetBuffer(), 0, (int)buffer.Length);
    }

    private static string Truncate(string text, int length)
    {
        if (text.Length <= length)
        {
            return text;
        }

        int cut = char.IsHighSurrogate(text[length - 1]) ? length - 1 : length;
        return text[..cut] + "\u2026";
    }

    private static string ShortReference(string reference) =>
        reference.StartsWith("groupings/", StringComparison.Ordinal) ? "the saved grouping \u201c" + reference["groupings/".Length..] + "\u201d" : reference;
}
