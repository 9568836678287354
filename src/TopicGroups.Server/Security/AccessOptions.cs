using System.Text.RegularExpressions;

namespace TopicGroups.Server.Security;

/// <summary>
/// Who may call, from configuration section "TopicGroups:Access" (docs/operations.md, "Access"). Each key belongs
/// to one tenant; configuration holds only the SHA-256 of each key, so no secret sits in a config file.
/// With no keys, every call is accepted and acts for the default tenant.
/// </summary>
internal sealed partial class AccessOptions
{
    public const string SectionName = "TopicGroups:Access";

    /// <summary>The accepted keys. Several may name one tenant (rotation: add the new key, move callers, drop the old).</summary>
    /// <value>The default is none: access checks are off.</value>
    public List<AccessKeyOptions> Keys { get; set; } = [];

    public bool Enabled => Keys.Count > 0;

    /// <summary>Throws naming the configuration key to fix; called once at start.</summary>
    public void Validate()
    {
        var seen = new Dictionary<string, int>(StringComparer.OrdinalIgnoreCase);
        for (int i = 0; i < Keys.Count; i++)
        {
            AccessKeyOptions key = Keys[i];
            string prefix = $"{SectionName}:Keys:{i}";
            if (string.IsNullOrWhiteSpace(key.Tenant) || !TenantPattern().IsMatch(key.Tenant))
            {
                throw new InvalidOperationException(
                    $"{prefix}:Tenant is \"{key.Tenant}\"; name the tenant with 1 to 63 lower-case letters, digits, '-' or '_', starting with a letter or digit.");
            }

            if (string.IsNullOrWhiteSpace(key.Sha256) || !Sha256Pattern().IsMatch(key.Sha256))
            {
                // The value is not echoed: an operator may have pasted the key itself here by mistake.
                throw new InvalidOperationException(
                    $"{prefix}:Sha256 is not 64 hexadecimal digits; set it to the SHA-256 of the key, e.g. the output of `printf %s \"$KEY\" | sha256sum` (the key itself never goes into configuration).");
            }

            if (seen.TryGetValue(key.Sha256, out int earlier))
            {
                throw new InvalidOperationException($"{prefix}:Sha256 repeats {SectionName}:Keys:{earlier}:Sha256; give each key one entry (and one tenant).");
            }

            seen.Add(key.Sha256, i);
        }
    }

    [GeneratedRegex("^[a-z0-9][a-z0-9_-]{0,62}$")]
    private static partial Regex TenantPattern();

    [GeneratedRegex("^[0-9a-fA-F]{64}$")]
    private static partial Regex Sha256Pattern();
}

/// <summary>One accepted key: its tenant and the SHA-256 (hex) of the key's UTF-8 bytes.</summary>
internal sealed class AccessKeyOptions
{
    /// <summary>The tenant whose saved groupings calls with this key see, save and delete.</summary>
    public string Tenant { get; set; } = string.Empty;

    /// <summary>SHA-256 of the key, 64 hexadecimal digits (either case).</summary>
    public string Sha256 { get; set; } = string.Empty;

    /// <summary>An optional label for logs ("support-2026-12"), so operators can tell keys apart during rotation.</summary>
    public string? Label { get; set; }
}
