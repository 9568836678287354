using Grpc.Core;
using Grpc.Health.V1;
using Grpc.Net.Client;
using TopicGroups.Protos.V1;

namespace TopicGroups.Client;

/// <summary>
/// Typed client of the TopicGroups service. Sends small batches in one message and large ones as a stream of
/// chunks, applies a deadline, and retries calls that fail with UNAVAILABLE (or RESOURCE_EXHAUSTED with a retry
/// delay) under a request id, so a retried grouping runs and saves once. Thread-safe.
/// </summary>
public sealed class TopicGroupsClient
{
    // A health check answers at once or not at all; it does not need the grouping's long deadline.
    private static readonly TimeSpan HealthCheckTimeout = TimeSpan.FromSeconds(10);

    // Bytes a document adds to its repeated field beyond its own size: a tag and a length prefix of at most
    // 5 bytes (a varint of a 32-bit length). Used to keep chunks under ChunkSizeBytes.
    private const int FieldOverheadBytes = 6;

    private readonly TopicGroupsService.TopicGroupsServiceClient _client;
    private readonly Health.HealthClient _health;
    private readonly TopicGroupsClientOptions _options;
    private readonly CallRetries _retry;

    /// <summary>Creates a client on a channel you own (and dispose).</summary>
    /// <remarks>
    /// Replies list every document: for large batches create the channel with
    /// GrpcChannelOptions.MaxReceiveMessageSize set to <see cref="TopicGroupsClientOptions.MaxResponseBytes"/>.
    /// </remarks>
#pragma warning disable RS0027 // The two constructors differ in their first parameter's type, so no call can become ambiguous.
    public TopicGroupsClient(GrpcChannel channel, TopicGroupsClientOptions? options = null)
        : this(new TopicGroupsService.TopicGroupsServiceClient(channel ?? throw new ArgumentNullException(nameof(channel))), options)
    {
    }
#pragma warning restore RS0027

    /// <summary>Creates a client on a generated client, e.g. one from the gRPC client factory (see AddTopicGroupsClient).</summary>
    public TopicGroupsClient(TopicGroupsService.TopicGroupsServiceClient client, TopicGroupsClientOptions? options)
    {
        ArgumentNullException.ThrowIfNull(client);
        _options = (options ?? new TopicGroupsClientOptions()).Validated();
        _client = ApiKeyHeader.Attach(client, _options.ApiKey);
        _health = new Health.HealthClient(_client.SharedCallInvoker);
        _retry = new CallRetries(_options, TimeProvider.System);
    }

    /// <summary>
    /// Groups documents into options.GroupCount themes, under a fresh request id (see
    /// <see cref="TopicGroupsClientOptions.AutomaticRequestIds"/>); otherwise as the overload that takes one.
    /// </summary>
#pragma warning disable RS0027 // The overload with a request id has no optional parameters, so no call can become ambiguous.
    public Task<GroupDocumentsResponse> GroupDocumentsAsync(
        IReadOnlyList<Document> documents,
        GroupingOptions options,
        IProgress<GroupingProgress>? progress = null,
        CancellationToken cancellationToken = default) =>
        GroupDocumentsAsync(_options.AutomaticRequestIds ? Guid.NewGuid().ToString() : string.Empty, documents, options, progress, cancellationToken);
#pragma warning restore RS0027

    /// <summary>
    /// Groups documents into options.GroupCount themes. <paramref name="requestId"/> (1-128 characters of A-Z, a-z,
    /// 0-9, '-', '_', '.'; empty for none) makes repeating the call safe, also across restarts of your own program:
    /// the server runs and saves a request once and answers its repeats with the same result (docs/retries.md).
    /// The batch travels in one message when its encoded size is at most StreamingThresholdBytes and no progress is asked for; otherwise it streams in chunks of about
    /// ChunkSizeBytes and the server reports progress (receiving, seeding, refining, describing) to
    /// <paramref name="progress"/>.
    /// </summary>
    /// <exception cref="RpcException">
    /// INVALID_ARGUMENT with a google.rpc.BadRequest naming each bad field (read it with
    /// <c>exception.GetRpcStatus()?.GetDetail&lt;BadRequest&gt;()</c>); RESOURCE_EXHAUSTED when the batch is over a
    /// server limit; DEADLINE_EXCEEDED after <see cref="TopicGroupsClientOptions.Timeout"/>; CANCELLED when
    /// <paramref name="cancellationToken"/> fires; UNAVAILABLE when every attempt failed.
    /// </exception>
    public async Task<GroupDocumentsResponse> GroupDocumentsAsync(
        string requestId,
        IReadOnlyList<Document> documents,
        GroupingOptions options,
        IProgress<GroupingProgress>? progress,
        CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(requestId);
        ArgumentNullException.ThrowIfNull(documents);
        ArgumentNullException.ThrowIfNull(options);

        // One deadline for the whole call: retries share what is left of it.
        DateTime deadline = DateTime.UtcNow + _options.Timeout;
        options = PackedPlacementReply.Request(options, _options.PackPlacements);
        int packedDimensions = _options.PackEmbeddings ? PackedEmbeddings.CommonDimensions(documents) : 0;
        if (packedDimensions > 0)
        {
            return await GroupPackedAsync(PackingSource.Of(documents, packedDimensions), requestId, options, progress, deadline, cancellationToken);
        }

        int[] sizes = EncodedSizes(documents, out long totalBytes);
        GroupDocumentsResponse response;
        if (progress is null && totalBytes <= _options.StreamingThresholdBytes)
        {
            var request = new GroupDocumentsRequest { Options = options, RequestId = requestId };
            request.Documents.AddRange(documents);
            response = await _retry.ExecuteAsync(
                async token => await _client.GroupDocumentsAsync(request, deadline: deadline, cancellationToken: token),
                cancellationToken);
        }
        else
        {
            List<StreamGroupDocumentsRequest> chunks = Chunk(documents, sizes, options, _options.ChunkSizeBytes);
            chunks[0].RequestId = requestId;   // every attempt re-sends these same chunks, from chunk 0
            response = await _retry.ExecuteAsync(
                async token => await StreamAsync(chunks, progress, deadline, token),
                cancellationToken);
        }

        return PackedPlacementReply.Expand(response, documents.Count, i => documents[i].Id);
    }

    /// <summary>
    /// Groups a batch held as a matrix (ids, texts and row-major float32 embeddings) into options.GroupCount themes,
    /// as <see cref="GroupDocumentsAsync(IReadOnlyList{Document}, GroupingOptions, IProgress{GroupingProgress}?, CancellationToken)"/>
    /// does (with a fresh request id when <see cref="TopicGroupsClientOptions.AutomaticRequestIds"/>), without a message
    /// per document: the rows travel as packed float32 bytes, copied from <see cref="EmbeddingBatch.Embeddings"/> one
    /// chunk at a time.
    /// </summary>
    /// <exception cref="RpcException">As <see cref="GroupDocumentsAsync(IReadOnlyList{Document}, GroupingOptions, IProgress{GroupingProgress}?, CancellationToken)"/>.</exception>
    public async Task<GroupDocumentsResponse> GroupEmbeddingsAsync(
        EmbeddingBatch batch,
        GroupingOptions options,
        IProgress<GroupingProgress>? progress = null,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(batch);
        ArgumentNullException.ThrowIfNull(options);
        DateTime deadline = DateTime.UtcNow + _options.Timeout;
        string requestId = _options.AutomaticRequestIds ? Guid.NewGuid().ToString() : string.Empty;
        options = PackedPlacementReply.Request(options, _options.PackPlacements);
        return await GroupPackedAsync(PackingSource.Of(batch), requestId, options, progress, deadline, cancellationToken);
    }

    /// <summary>The packed form: one message up to StreamingThresholdBytes (without progress), else chunks made as they are sent.</summary>
    private async Task<GroupDocumentsResponse> GroupPackedAsync(
        PackingSource source,
        string requestId,
        GroupingOptions options,
        IProgress<GroupingProgress>? progress,
        DateTime deadline,
        CancellationToken cancellationToken)
    {
        GroupDocumentsResponse response;
        if (progress is null && PackedEmbeddings.EncodedSize(source) <= _options.StreamingThresholdBytes)
        {
            GroupDocumentsRequest request = PackedEmbeddings.Unary(source, options);
            request.RequestId = requestId;
            response = await _retry.ExecuteAsync(
                async token => await _client.GroupDocumentsAsync(request, deadline: deadline, cancellationToken: token),
                cancellationToken);
        }
        else
        {
            // Each attempt packs the chunks afresh while it sends them: the batch is never held twice.
            response = await _retry.ExecuteAsync(
                async token => await StreamAsync(PackedEmbeddings.Chunks(source, requestId, options, _options.ChunkSizeBytes), progress, deadline, token),
                cancellationToken);
        }

        return PackedPlacementReply.Expand(response, source.Count, source.Id);
    }

    /// <summary>The resource name of a saved grouping: "groupings/{id}".</summary>
    public static string GroupingName(string id)
    {
        ArgumentException.ThrowIfNullOrEmpty(id);
        return "groupings/" + id;
    }

    /// <summary>A saved grouping by name ("groupings/{grouping}"); with <see cref="GroupingView.Full"/> every group carries its centre.</summary>
    /// <exception cref="RpcException">NOT_FOUND for an unknown name; INVALID_ARGUMENT for a malformed one.</exception>
    public async Task<Grouping> GetGroupingAsync(string name, GroupingView view = GroupingView.Basic, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(name);
        var request = new GetGroupingRequest { Name = name, View = view };
        return await _retry.ExecuteAsync(
            async token => await _client.GetGroupingAsync(request, deadline: DateTime.UtcNow + _options.Timeout, cancellationToken: token),
            cancellationToken);
    }

    /// <summary>Every saved grouping, newest first, fetched page by page as the sequence is read (groups are left out; see GetGroupingAsync).</summary>
    /// <param name="pageSize">Groupings per call; 0 for the server's default (50).</param>
    /// <param name="cancellationToken">Stops the listing between or during calls.</param>
    public async IAsyncEnumerable<Grouping> ListGroupingsAsync(
        int pageSize = 0,
        [System.Runtime.CompilerServices.EnumeratorCancellation] CancellationToken cancellationToken = default)
    {
        string token = string.Empty;
        do
        {
            var request = new ListGroupingsRequest { PageSize = pageSize, PageToken = token };
            ListGroupingsResponse page = await _retry.ExecuteAsync(
                async t => await _client.ListGroupingsAsync(request, deadline: DateTime.UtcNow + _options.Timeout, cancellationToken: t),
                cancellationToken);
            foreach (Grouping grouping in page.Groupings)
            {
                yield return grouping;
            }

            token = page.NextPageToken;
        }
        while (token.Length > 0);
    }

    /// <summary>Deletes a saved grouping.</summary>
    /// <exception cref="RpcException">NOT_FOUND for an unknown name (also when a retried call had already deleted it).</exception>
    public async Task DeleteGroupingAsync(string name, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(name);
        var request = new DeleteGroupingRequest { Name = name };
        await _retry.ExecuteAsync(
            async token => await _client.DeleteGroupingAsync(request, deadline: DateTime.UtcNow + _options.Timeout, cancellationToken: token),
            cancellationToken);
    }

    /// <summary>
    /// Routes documents into a saved grouping's themes: each goes to the most similar saved centre, with its
    /// similarity, margin, runner-up, and DocumentPlacement.IsOutlier when it fits no group. Documents need ids and
    /// embeddings (texts are not sent). Up to StreamingThresholdBytes they travel in one message, beyond that in
    /// chunks of about ChunkSizeBytes through StreamRouteDocuments. Placements come back in the documents' order.
    /// </summary>
    /// <exception cref="RpcException">NOT_FOUND for an unknown grouping; INVALID_ARGUMENT naming a bad document
    /// (for streamed batches the field says chunks[c].documents[i]).</exception>
    public async Task<IReadOnlyList<DocumentPlacement>> RouteDocumentsAsync(
        string grouping,
        IReadOnlyList<Document> documents,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(grouping);
        ArgumentNullException.ThrowIfNull(documents);
        DateTime deadline = DateTime.UtcNow + _options.Timeout;

        // Only ids and embeddings are needed: copies without the text keep the messages small.
        var bare = new Document[documents.Count];
        for (int i = 0; i < bare.Length; i++)
        {
            Document document = documents[i] ?? throw new ArgumentException($"documents[{i}] is null.", nameof(documents));
            bare[i] = new Document { Id = document.Id };
            bare[i].Embedding.Add(document.Embedding);
        }

        int[] sizes = EncodedSizes(bare, out long totalBytes);
        if (totalBytes <= _options.StreamingThresholdBytes)
        {
            var request = new RouteDocumentsRequest { Grouping = grouping };
            request.Documents.AddRange(bare);
            RouteDocumentsResponse response = await _retry.ExecuteAsync(
                async token => await _client.RouteDocumentsAsync(request, deadline: deadline, cancellationToken: token),
                cancellationToken);
            return response.Documents;
        }

        List<StreamGroupDocumentsRequest> chunks = Chunk(bare, sizes, new GroupingOptions(), _options.ChunkSizeBytes);
        return await _retry.ExecuteAsync(async token => await StreamRouteAsync(grouping, chunks, deadline, token), cancellationToken);
    }

    private async Task<IReadOnlyList<DocumentPlacement>> StreamRouteAsync(
        string grouping, List<StreamGroupDocumentsRequest> chunks, DateTime deadline, CancellationToken cancellationToken)
    {
        using AsyncDuplexStreamingCall<StreamRouteDocumentsRequest, RouteDocumentsResponse> call =
            _client.StreamRouteDocuments(deadline: deadline, cancellationToken: cancellationToken);
        var placements = new List<DocumentPlacement>(chunks.Sum(c => c.Documents.Count));
        async Task ReadAsync()
        {
            await foreach (RouteDocumentsResponse reply in call.ResponseStream.ReadAllAsync(cancellationToken))
            {
                placements.AddRange(reply.Documents);
            }
        }

        // Read while writing: the server answers each chunk as soon as it is routed.
        Task reading = ReadAsync();
        try
        {
            foreach (StreamGroupDocumentsRequest chunk in chunks)
            {
                if (reading.IsCompleted)
                {
                    break; // the server has ended the call (an error); its status is in `reading`
                }

                var request = new StreamRouteDocumentsRequest { ChunkIndex = chunk.ChunkIndex, Grouping = chunk.ChunkIndex == 0 ? grouping : string.Empty };
                request.Documents.AddRange(chunk.Documents);
                await call.RequestStream.WriteAsync(request, cancellationToken);
            }

            await call.RequestStream.CompleteAsync();
        }
        catch (Exception) when (!reading.IsCompletedSuccessfully)
        {
            await reading;
            throw;
        }

        await reading;
        return placements;
    }

    /// <summary>True when the server's grpc.health.v1 check reports SERVING.</summary>
    /// <exception cref="RpcException">The server could not be reached (no retries here).</exception>
    public async Task<bool> CheckHealthAsync(CancellationToken cancellationToken = default)
    {
        HealthCheckResponse response = await _health.CheckAsync(
            new HealthCheckRequest(),
            deadline: DateTime.UtcNow + HealthCheckTimeout,
            cancellationToken: cancellationToken);
        return response.Status == HealthCheckResponse.Types.ServingStatus.Serving;
    }

    private async Task<GroupDocumentsResponse> StreamAsync(
        IEnumerable<StreamGroupDocumentsRequest> chunks,
        IProgress<GroupingProgress>? progress,
        DateTime deadline,
        CancellationToken cancellationToken)
    {
        using AsyncDuplexStreamingCall<StreamGroupDocumentsRequest, StreamGroupDocumentsResponse> call =
            _client.StreamGroupDocuments(deadline: deadline, cancellationToken: cancellationToken);

        // Read while writing: the server answers each chunk with a progress event.
        Task<GroupDocumentsResponse> reading = ReadResultAsync(call.ResponseStream, progress, cancellationToken);
        try
        {
            foreach (StreamGroupDocumentsRequest chunk in chunks)
            {
                if (reading.IsCompleted)
                {
                    break; // the server has ended the call (an error); its status is in `reading`
                }

                await call.RequestStream.WriteAsync(chunk, cancellationToken);
            }

            await call.RequestStream.CompleteAsync();
        }
        catch (Exception) when (!reading.IsCompletedSuccessfully)
        {
            // A write fails once the server has ended the call; the server's status says why, so report that.
            await reading;
            throw;
        }

        return await reading;
    }

    private static async Task<GroupDocumentsResponse> ReadResultAsync(
        IAsyncStreamReader<StreamGroupDocumentsResponse> responses,
        IProgress<GroupingProgress>? progress,
        CancellationToken cancellationToken)
    {
        GroupDocumentsResponse? result = null;
        await foreach (StreamGroupDocumentsResponse response in responses.ReadAllAsync(cancellationToken))
        {
            switch (response.EventCase)
            {
                case StreamGroupDocumentsResponse.EventOneofCase.Progress:
                    progress?.Report(response.Progress);
                    break;
                case StreamGroupDocumentsResponse.EventOneofCase.Result:
                    result = response.Result;
                    break;
            }
        }

        return result ?? throw new RpcException(new Status(
            StatusCode.Internal,
            "The server ended the stream without a result; this is a server fault, please report it."));
    }

    private static int[] EncodedSizes(IReadOnlyList<Document> documents, out long totalBytes)
    {
        var sizes = new int[documents.Count];
        totalBytes = 0;
        for (int i = 0; i < sizes.Length; i++)
        {
            Document document = documents[i] ?? throw new ArgumentException($"documents[{i}] is null.", nameof(documents));
            sizes[i] = document.CalculateSize() + FieldOverheadBytes;
            totalBytes += sizes[i];
        }

        return sizes;
    }

    // Chunks hold references to the caller's documents (no copies); chunk 0 carries the options.
    private static List<StreamGroupDocumentsRequest> Chunk(
        IReadOnlyList<Document> documents,
        int[] sizes,
        GroupingOptions options,
        int chunkSizeBytes)
    {
        var chunks = new List<StreamGroupDocumentsRequest>();
        var current = new StreamGroupDocumentsRequest { ChunkIndex = 0, Options = options };
        long currentBytes = options.CalculateSize() + FieldOverheadBytes;
        for (int i = 0; i < documents.Count; i++)
        {
            if (current.Documents.Count > 0 && currentBytes + sizes[i] > chunkSizeBytes)
            {
                chunks.Add(current);
                current = new StreamGroupDocumentsRequest { ChunkIndex = chunks.Count };
                currentBytes = FieldOverheadBytes;
            }

            current.Documents.Add(documents[i]);
            currentBytes += sizes[i];
        }

        chunks.Add(current); // an empty batch still sends chunk 0, so the server can say what is wrong
        return chunks;
    }
}
