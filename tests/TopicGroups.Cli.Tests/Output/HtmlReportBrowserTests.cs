using System.Diagnostics;
using System.Net;
using System.Text.Json;
using System.Text.RegularExpressions;
using TopicGroups.Cli.Commands;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Output;

/// <summary>
/// Opens the demo's HTML report in a real browser, as a person would: Debian's chromium, headless, with no
/// network and a fresh profile. A checker script added to a copy of the report records script errors, which
/// group cards and map points the browser actually laid out, and what the reading panel shows after a click on a
/// dot; chromium's --dump-dom hands that back. Locally the test is skipped when chromium is not installed; in CI
/// (CI=true) a missing chromium fails it, so the check cannot silently vanish.
/// </summary>
public sealed class HtmlReportBrowserTests : IDisposable
{
    // Runs before the report's own script and keeps every uncaught error.
    private const string ErrorRecorder =
        "<script>window.__errors=[];window.addEventListener('error',function(e){window.__errors.push(String(e.message)+' @'+e.lineno);});</script>";

    // Runs after the report's script: measures what was laid out, clicks the first dot, writes the findings into the DOM.
    private const string Checker = """
        <script>
        (function () {
          var out = { errors: window.__errors, js: document.documentElement.classList.contains('js'), cards: [], mapGroups: {}, bars: 0 };
          document.querySelectorAll('article.group').forEach(function (a) {
            var r = a.getBoundingClientRect(); if (r.width > 0 && r.height > 0) { out.cards.push(a.id); }
          });
          document.querySelectorAll('#map .p').forEach(function (p) {
            var r = p.getBoundingClientRect(); var g = /\bg(\d+)\b/.exec(p.getAttribute('class'))[1];
            if (r.width > 0 && r.height > 0) { out.mapGroups[g] = (out.mapGroups[g] || 0) + 1; }
          });
          document.querySelectorAll('#sizes rect.bar').forEach(function (b) { if (b.getBoundingClientRect().width > 0) { out.bars++; } });
          var dot = document.querySelector('#map .p[data-i="0"]');
          dot.dispatchEvent(new MouseEvent('click', { bubbles: true }));
          out.panelShown = !document.getElementById('panel-body').hidden;
          out.panelId = document.getElementById('panel-id').textContent;
          out.panelText = document.getElementById('panel-text').textContent;
          var legend = document.querySelector('.legend button[data-g="1"]');
          legend.click();
          out.focus = document.getElementById('map').getAttribute('data-focus');
          out.dimmed = getComputedStyle(document.querySelector('#map .p.g0')).opacity;
          var pre = document.createElement('pre'); pre.id = 'browser-check'; pre.textContent = JSON.stringify(out);
          document.body.appendChild(pre);
        })();
        </script>
        """;

    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    private static string? FindChromium()
    {
        string? configured = Environment.GetEnvironmentVariable("CHROMIUM");
        foreach (string? candidate in new[] { configured, "/usr/bin/chromium", "/usr/bin/chromium-browser" })
        {
            if (!string.IsNullOrEmpty(candidate) && File.Exists(candidate))
            {
                return candidate;
            }
        }

        return null;
    }

    [SkippableFact]
    public async Task DemoReport_OpenedInHeadlessChromium_NoScriptErrorsEveryGroupShownPanelReadsADot()
    {
        string? chromium = FindChromium();
        bool ci = string.Equals(Environment.GetEnvironmentVariable("CI"), "true", StringComparison.OrdinalIgnoreCase);
        Assert.False(ci && chromium is null, "CI=true but chromium is not installed (.ci/run installs Debian's chromium package)");
        Skip.If(chromium is null, "chromium is not installed here; `apt-get install -y chromium` to run this test");

        string report = _directory.File("demo-report.html");
        string json = _directory.File("demo.json");
        var (exitCode, _, error) = await CliRun.RunAsync(ServiceGrouping.RunAsync, "demo", "--report", report, "--output", json);
        Assert.True(exitCode == ExitCodes.Success, error);
        int[] groupIds = JsonDocument.Parse(File.ReadAllText(json)).RootElement.GetProperty("groups").EnumerateArray()
            .Select(g => g.GetProperty("id").GetInt32()).ToArray();

        string html = File.ReadAllText(report);
        string checkedCopy = _directory.File("checked.html");
        File.WriteAllText(checkedCopy, html.Replace("<head>\n", "<head>\n" + ErrorRecorder + "\n").Replace("</body>", Checker + "</body>"));

        string dom = RunChromium(chromium!, checkedCopy);

        Match found = Regex.Match(dom, "<pre id=\"browser-check\">(.*?)</pre>", RegexOptions.Singleline);
        Assert.True(found.Success, "the checker did not run; chromium printed:\n" + dom[..Math.Min(dom.Length, 2000)]);
        JsonElement check = JsonDocument.Parse(WebUtility.HtmlDecode(found.Groups[1].Value)).RootElement;
        Assert.Equal(0, check.GetProperty("errors").GetArrayLength());
        Assert.True(check.GetProperty("js").GetBoolean(), "the report's script did not finish");
        Assert.Equal(groupIds.Select(id => $"group-{id}").Order(), check.GetProperty("cards").EnumerateArray().Select(c => c.GetString()!).Order());
        Assert.Equal(groupIds.Length, check.GetProperty("bars").GetInt32());
        Assert.Equal(groupIds.Length, check.GetProperty("mapGroups").EnumerateObject().Count());
        Assert.Equal(681, check.GetProperty("mapGroups").EnumerateObject().Sum(g => g.Value.GetInt32()));
        // Clicking the first dot shows that document: the demo's first ticket.
        Assert.True(check.GetProperty("panelShown").GetBoolean());
        string firstLine = File.ReadLines(Path.Combine(AppContext.BaseDirectory, "demo", "tickets.jsonl")).First();
        JsonElement firstTicket = JsonDocument.Parse(firstLine).RootElement;
        Assert.Equal(firstTicket.GetProperty("id").GetString(), check.GetProperty("panelId").GetString());
        Assert.Equal(firstTicket.GetProperty("text").GetString(), check.GetProperty("panelText").GetString());
        // Picking a group in the legend dims the others.
        Assert.Equal("1", check.GetProperty("focus").GetString());
        Assert.True(double.Parse(check.GetProperty("dimmed").GetString()!, System.Globalization.CultureInfo.InvariantCulture) < 0.5);
    }

    private string RunChromium(string chromium, string page)
    {
        string profile = Path.Combine(_directory.Path, "profile");
        Directory.CreateDirectory(profile);
        var start = new ProcessStartInfo(chromium)
        {
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        foreach (string argument in new[]
        {
            "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
            "--disable-sync", "--no-first-run", $"--user-data-dir={profile}", "--window-size=1366,900",
            "--virtual-time-budget=5000", "--dump-dom", new Uri(page).AbsoluteUri,
        })
        {
            start.ArgumentList.Add(argument);
        }

        using Process process = Process.Start(start)!;
        Task<string> output = process.StandardOutput.ReadToEndAsync();
        Task<string> errors = process.StandardError.ReadToEndAsync();
        if (!process.WaitForExit(TimeSpan.FromSeconds(90)))
        {
            process.Kill(entireProcessTree: true);
            Assert.Fail("chromium did not finish within 90 s");
        }

        Assert.True(process.ExitCode == 0, $"chromium exited with {process.ExitCode}: {errors.Result}");
        return output.Result;
    }
}
