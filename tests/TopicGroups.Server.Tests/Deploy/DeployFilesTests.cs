using System.Runtime.CompilerServices;
using System.Text.RegularExpressions;
using Xunit;
using YamlDotNet.RepresentationModel;

namespace TopicGroups.Server.Tests.Deploy;

/// <summary>
/// What can be checked of deploy/ without a container engine or a cluster: every manifest parses, the probes and
/// the Service point at the port the image exposes, the container runs as non-root, the connection string comes
/// from the Secret, and the Dockerfile publishes the real server project.
/// </summary>
public sealed partial class DeployFilesTests
{
    private static readonly string Root = RepositoryRoot();
    private static readonly string DeployFolder = Path.Combine(Root, "deploy");
    private static readonly string[] DockerfileLines = File.ReadAllLines(Path.Combine(DeployFolder, "Dockerfile"));

    private static string RepositoryRoot([CallerFilePath] string thisFile = "")
    {
        // The test binaries may live under any artifacts path; this source file's location is fixed.
        DirectoryInfo? folder = new FileInfo(thisFile).Directory;
        while (folder is not null && !File.Exists(Path.Combine(folder.FullName, "TopicGroups.sln")))
        {
            folder = folder.Parent;
        }

        return folder?.FullName ?? throw new InvalidOperationException($"no TopicGroups.sln above {thisFile}");
    }

    /// <summary>Every YAML document under deploy/, by file.</summary>
    private static List<(string File, YamlMappingNode Document)> Manifests()
    {
        var manifests = new List<(string, YamlMappingNode)>();
        foreach (string file in Directory.EnumerateFiles(DeployFolder, "*.yaml", SearchOption.AllDirectories)
                     .Concat(Directory.EnumerateFiles(DeployFolder, "*.yml", SearchOption.AllDirectories)).Order())
        {
            var stream = new YamlStream();
            using (var reader = new StreamReader(file))
            {
                stream.Load(reader);
            }

            foreach (YamlDocument document in stream.Documents)
            {
                manifests.Add((Path.GetRelativePath(Root, file), Assert.IsType<YamlMappingNode>(document.RootNode)));
            }
        }

        return manifests;
    }

    private static YamlMappingNode Single(string kind) =>
        Assert.Single(Manifests(), m => Text(m.Document, "kind") == kind).Document;

    private static YamlMappingNode Named(string kind, string name) =>
        Assert.Single(Manifests(), m => Text(m.Document, "kind") == kind && Text(m.Document, "metadata", "name") == name).Document;

    private static YamlNode At(YamlNode node, params object[] path)
    {
        foreach (object step in path)
        {
            node = step switch
            {
                string key => ((YamlMappingNode)node).Children[new YamlScalarNode(key)],
                int index => ((YamlSequenceNode)node).Children[index],
                _ => throw new ArgumentException($"bad path step {step}"),
            };
        }

        return node;
    }

    private static string Text(YamlNode node, params object[] path) => ((YamlScalarNode)At(node, path)).Value!;

    private static bool Has(YamlNode node, string key) =>
        node is YamlMappingNode mapping && mapping.Children.ContainsKey(new YamlScalarNode(key));

    private static YamlMappingNode ServerContainer() =>
        (YamlMappingNode)At(Single("Deployment"), "spec", "template", "spec", "containers", 0);

    private static int ExposedPort() =>
        int.Parse(Assert.Single(DockerfileLines, line => line.StartsWith("EXPOSE ", StringComparison.Ordinal))["EXPOSE ".Length..].Trim());

    private static string ConfigValue(string key) => Text(Single("ConfigMap"), "data", key);

    [Fact]
    public void Manifests_EveryDocument_ParsesWithApiVersionKindAndName()
    {
        var manifests = Manifests();

        Assert.True(manifests.Count >= 4, $"found {manifests.Count} manifests");
        foreach (var (file, document) in manifests)
        {
            Assert.True(Has(document, "apiVersion"), $"{file}: no apiVersion");
            Assert.True(Has(document, "kind"), $"{file}: no kind");
            Assert.False(string.IsNullOrWhiteSpace(Text(document, "metadata", "name")), $"{file}: no metadata.name");
        }

        Assert.Equal(
            ["ConfigMap", "Deployment", "Secret", "Secret", "Service"],
            manifests.Select(m => Text(m.Document, "kind")).Order().ToArray());
    }

    [Fact]
    public void Deployment_ProbesAndService_UseGrpcHealthOnThePortTheImageExposes()
    {
        int exposed = ExposedPort();
        YamlMappingNode container = ServerContainer();
        YamlNode port = At(container, "ports", 0);

        Assert.Equal(exposed, int.Parse(Text(port, "containerPort")));
        Assert.Equal(exposed, int.Parse(Text(container, "livenessProbe", "grpc", "port")));
        Assert.Equal(exposed, int.Parse(Text(container, "readinessProbe", "grpc", "port")));
        Assert.Equal(exposed.ToString(), ConfigValue("TopicGroups__Port"));
        Assert.Equal("true", ConfigValue("TopicGroups__ListenAnyAddress"));
        Assert.Contains($"TopicGroups__Port={exposed}", string.Join('\n', DockerfileLines));

        YamlNode servicePort = At(Single("Service"), "spec", "ports", 0);
        Assert.Equal(Text(port, "name"), Text(servicePort, "targetPort"));
        Assert.Equal("grpc", Text(servicePort, "appProtocol"));
    }

    [Fact]
    public void Container_ImageAndPod_RunAsNonRoot()
    {
        string user = Assert.Single(DockerfileLines, line => line.StartsWith("USER ", StringComparison.Ordinal))["USER ".Length..].Trim();
        YamlNode pod = At(Single("Deployment"), "spec", "template", "spec", "securityContext");
        YamlNode container = At(ServerContainer(), "securityContext");

        Assert.NotEqual("root", user);
        Assert.NotEqual("0", user);
        Assert.Equal("true", Text(pod, "runAsNonRoot"));
        Assert.Equal(user, Text(pod, "runAsUser"));
        Assert.Equal("false", Text(container, "allowPrivilegeEscalation"));

        // USER must come after the last RUN, or later steps would run as root in the final image.
        int lastFrom = Array.FindLastIndex(DockerfileLines, line => line.StartsWith("FROM ", StringComparison.Ordinal));
        int userLine = Array.FindIndex(DockerfileLines, line => line.StartsWith("USER ", StringComparison.Ordinal));
        int lastRun = Array.FindLastIndex(DockerfileLines, line => line.StartsWith("RUN ", StringComparison.Ordinal));
        Assert.True(userLine > lastFrom && userLine > lastRun, "USER must be set in the final stage, after its last RUN");
    }

    [Fact]
    public void Dockerfile_PublishCommand_BuildsTheServerProjectItRuns()
    {
        string publish = Assert.Single(DockerfileLines, line => line.StartsWith("RUN dotnet publish ", StringComparison.Ordinal));
        Match parsed = PublishCommand().Match(publish);
        Assert.True(parsed.Success, publish);
        string projectPath = Path.Combine(Root, parsed.Groups["project"].Value);
        string project = Directory.Exists(projectPath)
            ? Assert.Single(Directory.GetFiles(projectPath, "*.csproj"))
            : projectPath;
        string entrypoint = Assert.Single(DockerfileLines, line => line.StartsWith("ENTRYPOINT ", StringComparison.Ordinal));

        Assert.True(File.Exists(project), $"{parsed.Groups["project"].Value} is not a project in this repository");
        Assert.Equal("src/TopicGroups.Server/TopicGroups.Server.csproj", Path.GetRelativePath(Root, project).Replace('\\', '/'));
        Assert.Equal("Release", parsed.Groups["configuration"].Value);
        Assert.Contains($"\"{Path.GetFileNameWithoutExtension(project)}.dll\"", entrypoint);

        // The runtime image's .NET version is the one the projects target (Directory.Build.props).
        string targetFramework = TargetFramework().Match(File.ReadAllText(Path.Combine(Root, "Directory.Build.props"))).Groups["version"].Value;
        Assert.Contains(DockerfileLines, line => line.StartsWith($"FROM mcr.microsoft.com/dotnet/aspnet:{targetFramework} ", StringComparison.Ordinal));
        Assert.Contains(DockerfileLines, line => line.StartsWith($"FROM mcr.microsoft.com/dotnet/sdk:{targetFramework} ", StringComparison.Ordinal));
    }

    [Fact]
    public void Deployment_SeveralReplicas_ShareThePostgresStoreFromTheSecret()
    {
        YamlNode connection = Assert.Single(
            ((YamlSequenceNode)At(ServerContainer(), "env")).Children,
            variable => Text(variable, "name") == "TopicGroups__Storage__PostgresConnectionString");
        YamlNode reference = At(connection, "valueFrom", "secretKeyRef");
        YamlMappingNode secret = Named("Secret", Text(reference, "name"));

        Assert.True(int.Parse(Text(Single("Deployment"), "spec", "replicas")) >= 2);
        Assert.Equal(Text(secret, "metadata", "name"), Text(reference, "name"));
        Assert.True(Has(At(secret, "stringData"), Text(reference, "key")), "the Secret has no such key");
        Assert.Equal(
            Text(Single("ConfigMap"), "metadata", "name"),
            Text(At(ServerContainer(), "envFrom", 0), "configMapRef", "name"));
    }

    [Fact]
    public void Deployment_AccessKeys_ComeFromTheirSecretAsTenantAndHashPairs()
    {
        YamlNode secretReference = Assert.Single(
            ((YamlSequenceNode)At(ServerContainer(), "envFrom")).Children, source => Has(source, "secretRef"));
        YamlMappingNode secret = Named("Secret", Text(secretReference, "secretRef", "name"));
        var entries = ((YamlMappingNode)At(secret, "stringData")).Children
            .ToDictionary(pair => ((YamlScalarNode)pair.Key).Value!, pair => ((YamlScalarNode)pair.Value).Value!);

        // Every entry is a configuration key of TopicGroups:Access (":" written "__"), and each key has its tenant and hash.
        Assert.NotEmpty(entries);
        Assert.All(entries.Keys, name => Assert.Matches(AccessKeyEntry(), name));
        foreach (var index in entries.Keys.Select(name => AccessKeyEntry().Match(name).Groups["index"].Value).Distinct())
        {
            Assert.Matches("^[a-z0-9][a-z0-9_-]{0,62}$", entries[$"TopicGroups__Access__Keys__{index}__Tenant"]);
            Assert.True(entries.ContainsKey($"TopicGroups__Access__Keys__{index}__Sha256"), $"key {index} has no Sha256");
        }

        // A plain key never goes into the manifests: each value is a placeholder or a 64-digit SHA-256.
        Assert.All(
            entries.Where(pair => pair.Key.EndsWith("__Sha256", StringComparison.Ordinal)).Select(pair => pair.Value),
            hash => Assert.Matches("^(REPLACE-[A-Z0-9-]+|[0-9a-fA-F]{64})$", hash));
    }

    [Fact]
    public void Deployment_MemoryLimit_CoversEveryAdmittedGrouping()
    {
        long perGrouping = long.Parse(ConfigValue("TopicGroups__Limits__MaxGroupingMemoryBytes"));
        int concurrent = int.Parse(ConfigValue("TopicGroups__Limits__MaxConcurrentGroupings"));
        string limit = Text(ServerContainer(), "resources", "limits", "memory");
        Match quantity = MemoryQuantity().Match(limit);
        Assert.True(quantity.Success, limit);
        long limitBytes = long.Parse(quantity.Groups["number"].Value) * quantity.Groups["unit"].Value switch
        {
            "Mi" => 1L << 20,
            "Gi" => 1L << 30,
            _ => throw new InvalidOperationException(limit),
        };

        Assert.True(
            limitBytes > concurrent * perGrouping,
            $"memory limit {limit} does not cover {concurrent} groupings of {perGrouping} bytes each");
    }

    [GeneratedRegex(@"^TopicGroups__Access__Keys__(?<index>\d+)__(Tenant|Sha256|Label)$")]
    private static partial Regex AccessKeyEntry();

    [GeneratedRegex(@"^RUN dotnet publish (?<project>\S+) -c (?<configuration>\S+)")]
    private static partial Regex PublishCommand();

    [GeneratedRegex(@"<TargetFramework>net(?<version>\d+\.\d+)</TargetFramework>")]
    private static partial Regex TargetFramework();

    [GeneratedRegex(@"^(?<number>\d+)(?<unit>Mi|Gi)$")]
    private static partial Regex MemoryQuantity();
}
