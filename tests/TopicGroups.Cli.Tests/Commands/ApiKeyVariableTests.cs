using System.Globalization;
using System.Security.Cryptography;
using System.Text;
using Microsoft.Data.Sqlite;
using TopicGroups.Cli.Commands;
using TopicGroups.Cli.Tests.TestSupport;
using TopicGroups.Server;

namespace TopicGroups.Cli.Tests.Commands;

// --server against a server that requires API keys, through the real parser: the key comes from TOPICGROUPS_API_KEY,
// a missing key gets a message saying which variable to set, and the key never appears in what the CLI prints.
// The variable is process-wide, so these tests run alone (the collection disables parallel runs).
[CollectionDefinition(Name, DisableParallelization = true)]
public sealed class EnvironmentCollection
{
    public const string Name = "Process environment";
}

[Collection(EnvironmentCollection.Name)]
public sealed class ApiKeyVariableTests : IDisposable
{
    private static readonly string Key = "tgk_" + Convert.ToHexString(RandomNumberGenerator.GetBytes(16)).ToLowerInvariant();

    private readonly TempDirectory _directory = new();

    public void Dispose()
    {
        Environment.SetEnvironmentVariable(ApiKeyVariable.Name, null);
        SqliteConnection.ClearAllPools();
        _directory.Dispose();
    }

    private string WriteTickets()
    {
        var builder = new StringBuilder();
        var random = new Random(11);
        for (int i = 0; i < 20; i++)
        {
            float[] embedding = Enumerable.Range(0, 8).Select(_ => (float)((random.NextDouble() - 0.5) * 0.1)).ToArray();
            embedding[i % 2 == 0 ? 0 : 4] += 1f;
            string text = i % 2 == 0 ? "the lift at the harbour is broken" : "invoice shows the wrong month";
            builder.Append(CultureInfo.InvariantCulture,
                $"{{\"id\": \"r{i}\", \"text\": \"{text}\", \"embedding\": [{string.Join(", ", embedding.Select(v => v.ToString("R", CultureInfo.InvariantCulture)))}]}}\n");
        }

        return _directory.WriteText("tickets.jsonl", builder.ToString());
    }

    [Fact]
    public async Task RemoteServerWithKeys_VariableUnsetThenSet_RefusedNamingTheVariableThenServedWithoutPrintingTheKey()
    {
        var settings = new Dictionary<string, string>
        {
            ["TopicGroups:Access:Keys:0:Tenant"] = "support",
            ["TopicGroups:Access:Keys:0:Sha256"] = Convert.ToHexString(SHA256.HashData(Encoding.UTF8.GetBytes(Key))),
            ["TopicGroups:Storage:SqlitePath"] = _directory.File("server.db"),
        };
        var (app, address) = await ServerHost.StartInProcessAsync(settings);
        await using (app)
        {
            string tickets = WriteTickets();
            Environment.SetEnvironmentVariable(ApiKeyVariable.Name, null);
            var refused = await CliRun.RunAsync(ServiceGrouping.RunAsync, "groupings", "list", "--server", address.ToString());

            Environment.SetEnvironmentVariable(ApiKeyVariable.Name, Key);
            var grouped = await CliRun.RunAsync(ServiceGrouping.RunAsync, "group", "--input", tickets, "--groups", "2", "--save", "harbour", "--server", address.ToString());
            var listed = await CliRun.RunAsync(ServiceGrouping.RunAsync, "groupings", "list", "--server", address.ToString());
            await app.StopAsync();

            Assert.NotEqual(0, refused.ExitCode);
            Assert.Contains("Unauthenticated", refused.Error);
            Assert.Contains(ApiKeyVariable.Name, refused.Error);
            Assert.True(grouped.ExitCode == 0, grouped.Error);
            Assert.True(listed.ExitCode == 0, listed.Error);
            Assert.Contains("harbour", listed.Output);
            foreach (string printed in new[] { refused.Output, refused.Error, grouped.Output, grouped.Error, listed.Output, listed.Error })
            {
                Assert.DoesNotContain(Key, printed);
            }
        }
    }
}
