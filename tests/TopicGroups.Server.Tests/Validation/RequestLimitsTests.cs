using Grpc.Core;
using Grpc.Net.Client;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Validation;

/// <summary>A server configured with small limits (TopicGroups:Limits:*), so limits are hit with small batches.</summary>
public sealed class SmallLimitsHost() : TestHost(new Dictionary<string, string?>
{
    ["TopicGroups:Limits:MaxDocuments"] = "10",
    ["TopicGroups:Limits:MaxDimensions"] = "8",
    ["TopicGroups:Limits:MaxEmbeddingValues"] = "40",
    ["TopicGroups:Limits:MaxTextLength"] = "30",
    ["TopicGroups:Limits:MaxGroupCount"] = "3",
    ["TopicGroups:Limits:MaxMessageBytes"] = "4096",
});

/// <summary>Size limits: RESOURCE_EXHAUSTED with a QuotaFailure that states the limit and its configuration key.</summary>
public sealed class RequestLimitsTests(SmallLimitsHost host) : IClassFixture<SmallLimitsHost>
{
    private Task<RpcException> GroupFailsAsync(StatusCode expected, IEnumerable<Document> documents, int groupCount = 2) =>
        RpcAssert.FailsAsync(expected, async () =>
        {
            var request = new GroupDocumentsRequest { Options = new GroupingOptions { GroupCount = groupCount } };
            request.Documents.AddRange(documents);
            await host.Client.GroupDocumentsAsync(request);
        });

    [Fact]
    public async Task GroupDocuments_MoreDocumentsThanLimit_ResourceExhaustedStatesLimit()
    {
        RpcException error = await GroupFailsAsync(StatusCode.ResourceExhausted, TestBatches.Valid(11, d: 2));

        var violation = RpcAssert.Quota(error);
        Assert.Equal("documents", violation.Subject);
        Assert.Contains("more than 10 documents", violation.Description);
        Assert.Contains("TopicGroups:Limits:MaxDocuments", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_EmbeddingLongerThanDimensionLimit_ResourceExhausted()
    {
        var documents = TestBatches.Valid(3, d: 9);

        RpcException error = await GroupFailsAsync(StatusCode.ResourceExhausted, documents);

        var violation = RpcAssert.Quota(error);
        Assert.Equal("documents[0].embedding", violation.Subject);
        Assert.Contains("at most 8 dimensions", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_TotalEmbeddingValuesAboveLimit_ResourceExhaustedNamesDocument()
    {
        var documents = TestBatches.Valid(6, d: 8); // 48 values; the limit is 40, passed at the sixth document

        RpcException error = await GroupFailsAsync(StatusCode.ResourceExhausted, documents);

        var violation = RpcAssert.Quota(error);
        Assert.Contains("more than 40 embedding values", violation.Description);
        Assert.Contains("documents[5]", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_TextLongerThanLimit_ResourceExhaustedNamesText()
    {
        var documents = TestBatches.Valid(3, d: 2);
        documents[1].Text = new string('a', 31);

        RpcException error = await GroupFailsAsync(StatusCode.ResourceExhausted, documents);

        var violation = RpcAssert.Quota(error);
        Assert.Equal("documents[1].text", violation.Subject);
        Assert.Contains("at most 30", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_GroupCountAboveConfiguredLimit_InvalidArgumentStatesLimit()
    {
        RpcException error = await GroupFailsAsync(StatusCode.InvalidArgument, TestBatches.Valid(5, d: 2), groupCount: 4);

        Assert.Contains("at most 3 groups", RpcAssert.Single(error, "options.group_count").Description);
    }

    [Fact]
    public async Task GroupDocuments_MessageLargerThanReceiveLimit_ResourceExhaustedBeforeValidation()
    {
        // MaxMessageBytes = 4096 becomes gRPC's MaxReceiveMessageSize: the message is refused unread.
        var request = new GroupDocumentsRequest { Options = new GroupingOptions { GroupCount = 1 } };
        request.Documents.Add(TestBatches.Make("long", 1f, 0f));
        request.Documents[0].Text = new string('t', 5000);

        RpcException error = await RpcAssert.FailsAsync(
            StatusCode.ResourceExhausted, async () => await host.Client.GroupDocumentsAsync(request));

        Assert.Contains("larger than this server accepts (4096 bytes, TopicGroups:Limits:MaxMessageBytes)", error.Status.Detail);
        Assert.Contains("StreamGroupDocuments", error.Status.Detail);
    }

    [Fact]
    public async Task GroupDocuments_MessageLargerThanReceiveLimitOverRealSocket_MessageStatesLimit()
    {
        // Kestrel over loopback HTTP/2 sends the refusal as a real trailers-only response.
        var app = ServerHost.Build(["--TopicGroups:Limits:MaxMessageBytes=4096", "--Logging:LogLevel:Default=Warning"], port: 0);
        await app.StartAsync();
        await using var _ = app;
        using var channel = GrpcChannel.ForAddress(app.Urls.First());
        var client = new TopicGroupsService.TopicGroupsServiceClient(channel);
        var request = new GroupDocumentsRequest { Options = new GroupingOptions { GroupCount = 1 } };
        request.Documents.Add(TestBatches.Make("long", 1f, 0f));
        request.Documents[0].Text = new string('t', 5000);

        RpcException error = await RpcAssert.FailsAsync(
            StatusCode.ResourceExhausted, async () => await client.GroupDocumentsAsync(request));

        Assert.Contains("(4096 bytes, TopicGroups:Limits:MaxMessageBytes)", error.Status.Detail);
        await app.StopAsync();
    }

    [Fact]
    public async Task StreamGroupDocuments_DocumentsAboveLimitAcrossChunks_ResourceExhausted()
    {
        var documents = TestBatches.Valid(12, d: 2);
        RpcException error = await RpcAssert.FailsAsync(StatusCode.ResourceExhausted, async () =>
        {
            using var call = host.Client.StreamGroupDocuments();
            try
            {
                for (int chunk = 0; chunk < 3; chunk++)
                {
                    var request = new StreamGroupDocumentsRequest { ChunkIndex = chunk };
                    if (chunk == 0)
                    {
                        request.Options = new GroupingOptions { GroupCount = 2 };
                    }

                    request.Documents.AddRange(documents.Skip(chunk * 4).Take(4));
                    await call.RequestStream.WriteAsync(request);
                }

                await call.RequestStream.CompleteAsync();
            }
            catch (InvalidOperationException)
            {
                // the server has already answered
            }

            await foreach (var _ in call.ResponseStream.ReadAllAsync())
            {
            }
        });

        Assert.Contains("more than 10 documents", RpcAssert.Quota(error).Description);
    }

    [Fact]
    public async Task Start_NonPositiveLimitConfigured_FailsNamingTheKey()
    {
        var error = await Assert.ThrowsAnyAsync<Exception>(async () =>
        {
            await using var app = ServerHost.Build(["--TopicGroups:Limits:MaxDocuments=0", "--Logging:LogLevel:Default=None"], port: 0);
            await app.StartAsync();
        });

        Assert.Contains("TopicGroups:Limits:MaxDocuments is 0", error.ToString());
    }
}
