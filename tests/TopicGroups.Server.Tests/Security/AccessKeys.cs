using System.Security.Cryptography;
using System.Text;

namespace TopicGroups.Server.Tests.Security;

/// <summary>Fresh random keys for tests and the configuration entries that accept them (only the SHA-256 is configured).</summary>
public static class AccessKeys
{
    public static string NewKey() => "tgk_" + Convert.ToHexString(RandomNumberGenerator.GetBytes(24)).ToLowerInvariant();

    public static string Sha256Of(string key) => Convert.ToHexString(SHA256.HashData(Encoding.UTF8.GetBytes(key)));

    /// <summary>Settings TopicGroups:Access:Keys:i:Tenant and :Sha256 for each (tenant, key).</summary>
    public static Dictionary<string, string> Settings(params (string Tenant, string Key)[] keys)
    {
        var settings = new Dictionary<string, string>();
        for (int i = 0; i < keys.Length; i++)
        {
            settings[$"TopicGroups:Access:Keys:{i}:Tenant"] = keys[i].Tenant;
            settings[$"TopicGroups:Access:Keys:{i}:Sha256"] = Sha256Of(keys[i].Key);
        }

        return settings;
    }
}
