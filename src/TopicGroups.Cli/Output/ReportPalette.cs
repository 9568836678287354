using System.Globalization;

namespace TopicGroups.Cli.Output;

/// <summary>
/// Colours and marker shapes of groups in the HTML report. Colours: the eight of Okabe &amp; Ito, "Color Universal
/// Design: how to make figures and presentations that are friendly to colorblind people" (2008), chosen to stay
/// distinct under the common colour-vision deficiencies; yellow is placed late because it is faint on white. Beyond
/// eight groups the colours repeat with the next marker shape, so no two of the first 40 groups look alike.
/// </summary>
internal static class ReportPalette
{
    // Okabe & Ito (2008): blue, orange, bluish green, vermillion, sky blue, reddish purple, yellow, black.
    public static readonly string[] Colours = ["#0072B2", "#E69F00", "#009E73", "#D55E00", "#56B4E9", "#CC79A7", "#F0E442", "#000000"];

    /// <summary>Shape names, in the order they are used: every eight groups take the next one.</summary>
    public static readonly string[] Shapes = ["circle", "square", "triangle", "diamond", "down-triangle"];

    public static int ColourIndex(int groupIndex) => groupIndex % Colours.Length;

    public static int ShapeIndex(int groupIndex) => groupIndex / Colours.Length % Shapes.Length;

    /// <summary>SVG symbols, one per shape, centred on 0,0 and about 7 units across; points refer to them with &lt;use&gt;.</summary>
    public static string SymbolDefinitions() =>
        """
        <symbol id="shape-0" overflow="visible"><circle r="3.4"/></symbol>
        <symbol id="shape-1" overflow="visible"><rect x="-3" y="-3" width="6" height="6"/></symbol>
        <symbol id="shape-2" overflow="visible"><path d="M0,-3.9L3.5,2.4H-3.5Z"/></symbol>
        <symbol id="shape-3" overflow="visible"><path d="M0,-4L4,0L0,4L-4,0Z"/></symbol>
        <symbol id="shape-4" overflow="visible"><path d="M0,3.9L3.5,-2.4H-3.5Z"/></symbol>
        """;

    /// <summary>One CSS rule per colour: .c0 … .c7 fill and stroke with the colour.</summary>
    public static string ColourRules()
    {
        var rules = new System.Text.StringBuilder();
        for (int c = 0; c < Colours.Length; c++)
        {
            rules.Append(CultureInfo.InvariantCulture, $".c{c}{{fill:{Colours[c]};color:{Colours[c]}}}\n");
        }

        return rules.ToString();
    }
}
