using System.Net;
using System.Net.Security;
using System.Security.Cryptography;
using System.Security.Cryptography.X509Certificates;
using Grpc.Core;
using Grpc.Net.Client;
using Microsoft.Extensions.Logging;
using TopicGroups.Client;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Security;

/// <summary>
/// TLS from configuration on a real loopback socket, with a self-signed certificate made for each test. The client
/// trusts exactly that certificate (a custom root), so host name and chain checks run as they would in production.
/// </summary>
public sealed class TlsTests : IDisposable
{
    private const string Password = "ferry-cabin-7";

    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-tls-").FullName;
    private readonly ECDsa _key = ECDsa.Create(ECCurve.NamedCurves.nistP256);
    private readonly X509Certificate2 _certificate;

    public TlsTests()
    {
        var request = new CertificateRequest("CN=localhost", _key, HashAlgorithmName.SHA256);
        var names = new SubjectAlternativeNameBuilder();
        names.AddDnsName("localhost");
        names.AddIpAddress(IPAddress.Loopback);
        request.CertificateExtensions.Add(names.Build());
        request.CertificateExtensions.Add(new X509KeyUsageExtension(X509KeyUsageFlags.DigitalSignature, critical: true));
        request.CertificateExtensions.Add(new X509EnhancedKeyUsageExtension([new Oid("1.3.6.1.5.5.7.3.1")], critical: false));   // server authentication
        request.CertificateExtensions.Add(new X509BasicConstraintsExtension(certificateAuthority: false, hasPathLengthConstraint: false, 0, critical: true));
        _certificate = request.CreateSelfSigned(DateTimeOffset.UtcNow.AddMinutes(-5), DateTimeOffset.UtcNow.AddDays(1));
        File.WriteAllBytes(PfxPath, _certificate.Export(X509ContentType.Pkcs12, Password));
        File.WriteAllText(CertificatePemPath, _certificate.ExportCertificatePem());
        File.WriteAllText(KeyPemPath, _key.ExportPkcs8PrivateKeyPem());
    }

    private string PfxPath => Path.Combine(_folder, "server.pfx");

    private string CertificatePemPath => Path.Combine(_folder, "server.crt");

    private string KeyPemPath => Path.Combine(_folder, "server.key");

    public void Dispose()
    {
        _certificate.Dispose();
        _key.Dispose();
        Directory.Delete(_folder, recursive: true);
    }

    /// <summary>A channel that trusts only this test's certificate.</summary>
    private GrpcChannel TrustingChannel(Uri address)
    {
        var policy = new X509ChainPolicy { TrustMode = X509ChainTrustMode.CustomRootTrust, RevocationMode = X509RevocationMode.NoCheck };
        policy.CustomTrustStore.Add(_certificate);
        var handler = new SocketsHttpHandler { SslOptions = new SslClientAuthenticationOptions { CertificateChainPolicy = policy } };
        return GrpcChannel.ForAddress(address, new GrpcChannelOptions { HttpHandler = handler });
    }

    [Fact]
    public async Task Pfx_ClientTrustingTheCertificateWithApiKey_GroupsSavesAndListsOverTls()
    {
        string apiKey = AccessKeys.NewKey();
        var settings = AccessKeys.Settings(("editors", apiKey));
        settings["TopicGroups:Tls:CertificatePath"] = PfxPath;
        settings["TopicGroups:Tls:CertificatePassword"] = Password;
        await using LoopbackServer server = await LoopbackServer.StartAsync(settings);
        using GrpcChannel channel = TrustingChannel(server.Address);
        var client = new TopicGroupsClient(channel, new TopicGroupsClientOptions { ApiKey = apiKey });

        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 10, dimensions: 16, seed: 8);
        GroupDocumentsResponse grouped = await client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 3, SaveAs = "over-tls" });
        List<Grouping> listed = await client.ListGroupingsAsync().ToListAsync();

        Assert.Equal("https", server.Address.Scheme);
        Assert.True(server.Address.IsLoopback);
        Assert.True(await client.CheckHealthAsync());
        Assert.Equal([10, 10, 10], grouped.Groups.Select(g => g.Size));
        Assert.Equal("groupings/over-tls", Assert.Single(listed).Name);
    }

    [Fact]
    public async Task PemCertificateAndKey_ClientTrustingTheCertificate_Healthy()
    {
        await using LoopbackServer server = await LoopbackServer.StartAsync(new Dictionary<string, string>
        {
            ["TopicGroups:Tls:CertificatePath"] = CertificatePemPath,
            ["TopicGroups:Tls:KeyPath"] = KeyPemPath,
        });
        using GrpcChannel channel = TrustingChannel(server.Address);

        Assert.True(await new TopicGroupsClient(channel).CheckHealthAsync());
    }

    [Fact]
    public async Task Tls_ClientWithoutTrustInTheCertificate_CallFailsOnTheHandshake()
    {
        await using LoopbackServer server = await LoopbackServer.StartAsync(new Dictionary<string, string>
        {
            ["TopicGroups:Tls:CertificatePath"] = PfxPath,
            ["TopicGroups:Tls:CertificatePassword"] = Password,
        });
        using var channel = GrpcChannel.ForAddress(server.Address);   // the system's trust store only
        var client = new TopicGroupsService.TopicGroupsServiceClient(channel);

        RpcException failure = await Assert.ThrowsAsync<RpcException>(() => client.ListGroupingsAsync(new ListGroupingsRequest()).ResponseAsync);

        // grpc-dotnet reports a failed TLS handshake as INTERNAL (an AuthenticationException), a refused one as UNAVAILABLE.
        Assert.Contains(failure.StatusCode, new[] { StatusCode.Internal, StatusCode.Unavailable });
        Assert.IsType<System.Security.Authentication.AuthenticationException>(failure.Status.DebugException?.InnerException ?? failure.Status.DebugException);
    }

    [Fact]
    public async Task Start_AnyAddressWithKeysAndTls_NoAccessWarning()
    {
        var settings = AccessKeys.Settings(("editors", AccessKeys.NewKey()));
        settings["TopicGroups:ListenAnyAddress"] = "true";
        settings["TopicGroups:Tls:CertificatePath"] = PfxPath;
        settings["TopicGroups:Tls:CertificatePassword"] = Password;
        await using LoopbackServer server = await LoopbackServer.StartAsync(settings);

        Assert.DoesNotContain(server.Logs.Entries, entry => entry.Level >= LogLevel.Warning && entry.Category.Contains("Access", StringComparison.Ordinal));
    }

    [Fact]
    public async Task Start_CertificateFileMissing_FailsNamingTheSetting()
    {
        var settings = new Dictionary<string, string> { ["TopicGroups:Tls:CertificatePath"] = Path.Combine(_folder, "absent.pfx") };

        Exception failure = await Assert.ThrowsAnyAsync<Exception>(async () => await (await LoopbackServer.StartAsync(settings)).DisposeAsync());

        Assert.Contains("TopicGroups:Tls:CertificatePath", failure.ToString());
        Assert.Contains("does not exist", failure.ToString());
    }

    [Fact]
    public async Task Start_WrongPfxPassword_FailsNamingThePasswordSettingWithoutEchoingIt()
    {
        const string wrong = "not-the-ferry-password";
        var settings = new Dictionary<string, string>
        {
            ["TopicGroups:Tls:CertificatePath"] = PfxPath,
            ["TopicGroups:Tls:CertificatePassword"] = wrong,
        };

        Exception failure = await Assert.ThrowsAnyAsync<Exception>(async () => await (await LoopbackServer.StartAsync(settings)).DisposeAsync());

        Assert.Contains("TopicGroups:Tls:CertificatePassword", failure.ToString());
        Assert.DoesNotContain(wrong, failure.ToString());
    }
}
