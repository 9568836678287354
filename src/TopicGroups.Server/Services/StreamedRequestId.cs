using Grpc.Core;
using TopicGroups.Server.Validation;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Services;

/// <summary>
/// The request id of a streamed grouping: read from chunk 0 (later chunks must leave it empty), with a fingerprint
/// of every chunk as it arrives. Chunks are hashed only when chunk 0 carries an id.
/// </summary>
internal sealed class StreamedRequestId(string method)
{
    private RequestFingerprint? _fingerprint;
    private string _requestId = string.Empty;

    /// <summary>Call after the validator accepted the chunk's index.</summary>
    public void Add(Proto.StreamGroupDocumentsRequest chunk)
    {
        if (chunk.ChunkIndex == 0 && chunk.RequestId.Length > 0)
        {
            RequestReplay.CheckRequestId(chunk.RequestId, "request_id");
            _requestId = chunk.RequestId;
            _fingerprint = new RequestFingerprint(method);
        }
        else if (chunk.RequestId.Length > 0)
        {
            throw StatusErrors.InvalidArgument(
                "request_id", $"is set on chunk {chunk.ChunkIndex}; send the request id with chunk 0 only and leave it empty on later chunks.");
        }

        if (_fingerprint is not null)
        {
            // The content without the id; the packed embeddings are hashed as received, not encoded again.
            string requestId = chunk.RequestId;
            Google.Protobuf.ByteString packed = chunk.PackedEmbeddings;
            chunk.RequestId = string.Empty;
            chunk.PackedEmbeddings = Google.Protobuf.ByteString.Empty;
            try
            {
                _fingerprint.Add(chunk, packed.Span);
            }
            finally
            {
                chunk.RequestId = requestId;
                chunk.PackedEmbeddings = packed;
            }
        }
    }

    /// <summary>Null when chunk 0 had no request id.</summary>
    public ReplayKey? Key(ServerCallContext context) =>
        _fingerprint is null ? null : RequestReplay.KeyOf(_requestId, "request_id", _fingerprint, context);
}
