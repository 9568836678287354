using System.Globalization;
using Google.Protobuf;
using Google.Protobuf.Collections;
using Google.Rpc;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Terms;
using TopicGroups.Core.Vectors;
using TopicGroups.Server.Embedding;
using TopicGroups.Server.Mapping;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Validation;

/// <summary>
/// Turns a request (one message, or the chunks of a stream) into a <see cref="GroupingInput"/>: checks
/// every document and option, and copies each embedding once, as it arrives, into the batch's row-major
/// float[] (<see cref="EmbeddingIntake"/>), so a chunk's message can go as soon as it is read. Embeddings come
/// per document (Document.embedding) or packed per message (packed_embeddings: float32 little-endian bytes,
/// copied as one block). A batch whose documents all come without embeddings is accepted when the server embeds
/// texts (<see cref="TextEmbedding"/>): its matrix is then allocated empty and <see cref="TextsToEmbed"/> says
/// what to fill it with. Bad input throws INVALID_ARGUMENT with up to <see cref="MaxViolations"/> field
/// violations; input over a configured size limit throws RESOURCE_EXHAUSTED at once, before more of it is held.
/// With a <see cref="BatchArrayPool"/> the matrix's array is lent by the pool: dispose the validator once nothing
/// reads the matrix any more (the grouping stopped and its reply is built, or the call failed).
/// </summary>
internal sealed class RequestValidator : IDisposable
{
    /// <summary>Violations collected before the request is rejected; enough to fix a batch in one round.</summary>
    public const int MaxViolations = 20;

    private const string PackedField = "packed_embeddings";
    private const string PackedDimensionsField = "embedding_dimensions";
    private const string DocumentCountField = "document_count";

    private readonly TopicGroupsLimits _limits;
    private readonly List<BadRequest.Types.FieldViolation> _violations = [];
    private readonly List<string> _ids = [];
    private readonly List<string> _texts = [];
    private readonly Dictionary<string, int> _indexById = new(StringComparer.Ordinal);
    private Proto.GroupingOptions? _options;
    private int _dimensions;                // of the first document with an embedding; 0 until one arrives
    private int _dimensionsSource = -1;     // index of that document, quoted in mismatch messages
    private int _textsOnlySource = -1;      // index of the first document, when it came without an embedding
    private readonly TextEmbedding? _embedding;
    private readonly BatchArrayPool? _pool;
    private long _embeddingValues;
    private int _nextChunkIndex;
    private int _expectedDocuments;         // documents the batch will have when known in advance (unary, document_count); 0 otherwise
    private bool _expectedFromChunk0;       // _expectedDocuments came from the caller's document_count
    private EmbeddingIntake? _intake;       // created once the batch's dimension is known
    private EmbeddingForm _form;            // how the first message with embeddings sent them
    private int _formSource = -1;           // that message's chunk index (0 for a unary request)

    private enum EmbeddingForm
    {
        None,
        PerDocument,
        Packed,
    }

    /// <param name="limits">Size limits.</param>
    /// <param name="embedding">The server's text embedding; null (or disabled) refuses documents without embeddings.</param>
    /// <param name="pool">Lends the batch's matrix array until <see cref="Dispose"/>; null allocates a new one.</param>
    public RequestValidator(TopicGroupsLimits limits, TextEmbedding? embedding = null, BatchArrayPool? pool = null)
    {
        ArgumentNullException.ThrowIfNull(limits);
        _limits = limits;
        _embedding = embedding;
        _pool = pool;
    }

    /// <summary>Set by <see cref="ToInput()"/> when the documents came without embeddings: the texts the server must embed first.</summary>
    public TextsToEmbed? TextsToEmbed { get; private set; }

    /// <summary>Documents accepted so far (across chunks).</summary>
    public int DocumentCount => _ids.Count;

    /// <summary>Checks a unary request and builds the Core input.</summary>
    public static GroupingInput ToInput(Proto.GroupDocumentsRequest request, TopicGroupsLimits limits) =>
        ToInput(request, limits, embedding: null, out _);

    /// <summary>Checks a unary request and builds the Core input; <paramref name="textsToEmbed"/> as <see cref="TextsToEmbed"/>.</summary>
    public static GroupingInput ToInput(
        Proto.GroupDocumentsRequest request, TopicGroupsLimits limits, TextEmbedding? embedding, out TextsToEmbed? textsToEmbed)
    {
        var validator = ForRequest(request, limits, embedding, pool: null);
        GroupingInput input = validator.ToInput();
        textsToEmbed = validator.TextsToEmbed;
        return input;
    }

    /// <summary>A validator that has checked a unary request's documents; <see cref="ToInput()"/> finishes the checks.</summary>
    public static RequestValidator ForRequest(
        Proto.GroupDocumentsRequest request, TopicGroupsLimits limits, TextEmbedding? embedding, BatchArrayPool? pool)
    {
        var validator = new RequestValidator(limits, embedding, pool) { _options = request.Options };
        validator.Expect(request.Documents.Count);
        try
        {
            validator.AddDocuments(request.Documents, request.PackedEmbeddings, request.EmbeddingDimensions, chunkIndex: null);
        }
        catch
        {
            validator.Dispose();
            throw;
        }

        return validator;
    }

    /// <summary>Gives the pool back the batch's array. Call once nothing reads the input's matrix any more.</summary>
    public void Dispose() => _intake?.Release();

    /// <summary>Checks one chunk of a stream: its index, its options (first chunk only) and its documents.</summary>
    public void AddChunk(Proto.StreamGroupDocumentsRequest chunk)
    {
        if (chunk.ChunkIndex != _nextChunkIndex)
        {
            throw StatusErrors.InvalidArgument(
                "chunk_index",
                $"is {chunk.ChunkIndex} but chunk {_nextChunkIndex} was expected next; number the chunks 0, 1, 2, ... "
                + "in sending order and send each exactly once.");
        }

        if (_nextChunkIndex == 0)
        {
            _options = chunk.Options;
            CheckDeclaredCount(chunk.DocumentCount);
        }
        else
        {
            if (chunk.Options is not null)
            {
                AddViolation(
                    "options",
                    $"is set on chunk {chunk.ChunkIndex}; send the options with chunk 0 only and leave them unset on later chunks.");
            }

            if (chunk.DocumentCount != 0)
            {
                AddViolation(
                    DocumentCountField,
                    $"is set on chunk {chunk.ChunkIndex}; send the batch's document count with chunk 0 only and leave it 0 on later chunks.");
            }
        }

        _nextChunkIndex++;
        AddDocuments(chunk.Documents, chunk.PackedEmbeddings, chunk.EmbeddingDimensions, chunk.ChunkIndex);
    }

    /// <summary>Finishes the checks that need the whole batch, then hands over the matrix the embeddings were copied into.</summary>
    public GroupingInput ToInput()
    {
        int n = _ids.Count;
        if (n == 0)
        {
            AddViolation("documents", "is empty; send at least one document (an id, a text and an embedding).");
        }

        if (_expectedFromChunk0 && n != _expectedDocuments)
        {
            AddViolation(
                DocumentCountField,
                $"is {_expectedDocuments} (chunk 0) but the stream brought {n} documents; set it to the number of documents of the "
                + "whole batch, or leave it 0.");
        }

        CheckOptions(n);
        ThrowIfInvalid();
        if (_textsOnlySource >= 0)
        {
            return TextsOnlyInput(n);
        }

        if (_intake is null || _intake.Rows != n)
        {
            throw new InvalidOperationException($"{n} documents were accepted but {_intake?.Rows ?? 0} embeddings were taken in.");
        }

        string[] ids = [.. _ids];
        string[] texts = [.. _texts];
        _ids.Clear();
        _texts.Clear();
        EmbeddingMatrix embeddings = _intake.ToMatrix();   // the intake stays: Dispose returns its array

        // The Core decides what it can normalise; its check is the last word should its rules grow.
        if (RowNormalisation.FindInvalidRow(embeddings, out string? reason) is int row)
        {
            throw StatusErrors.InvalidArgument(
                $"documents[{row}].embedding",
                $"cannot be scaled to unit length: it {reason}. Send the document's real embedding or leave the document out.");
        }

        return new GroupingInput(ids, texts, embeddings, OptionsMapper.ToCore(_options!));
    }

    /// <summary>Ids and texts now; the matrix is allocated (zeros) for the server's model to fill before grouping.</summary>
    private GroupingInput TextsOnlyInput(int n)
    {
        int d = MiniLmEmbedder.Dimensions;
        if ((long)n * d > _limits.MaxEmbeddingValues)
        {
            throw StatusErrors.ResourceExhausted(
                "documents",
                $"are {n} texts to embed, {(long)n * d} values of {d} dimensions: more than the {_limits.MaxEmbeddingValues} "
                + "embedding values this server holds for one batch (TopicGroups:Limits:MaxEmbeddingValues). Split the batch into smaller ones.");
        }

        string[] ids = [.. _ids];
        string[] texts = [.. _texts];
        _ids.Clear();
        _texts.Clear();
        var embeddings = EmbeddingMatrix.Allocate(n, d);
        TextsToEmbed = new TextsToEmbed(texts, embeddings, _embedding!);
        return new GroupingInput(ids, texts, embeddings, OptionsMapper.ToCore(_options!));
    }

    /// <summary>Chunk 0's document_count: lets the intake allocate the whole matrix once.</summary>
    private void CheckDeclaredCount(int declared)
    {
        if (declared < 0)
        {
            AddViolation(DocumentCountField, $"is {declared}; give the number of documents in the whole batch, or 0 when it is not known.");
        }
        else if (declared > _limits.MaxDocuments)
        {
            throw StatusErrors.ResourceExhausted(
                DocumentCountField,
                $"is {declared}, more than the {_limits.MaxDocuments} documents this server groups in one batch "
                + "(TopicGroups:Limits:MaxDocuments); split the batch into smaller ones.");
        }
        else if (declared > 0)
        {
            Expect(declared);
            _expectedFromChunk0 = true;
        }
    }

    /// <summary>
    /// Notes the batch's size, known in advance, and sizes the per-document lists and the id index once: grown step
    /// by step, they would copy themselves and touch fresh memory at every step.
    /// </summary>
    private void Expect(int documents)
    {
        _expectedDocuments = documents;
        _ids.EnsureCapacity(documents);
        _texts.EnsureCapacity(documents);
        _indexById.EnsureCapacity(documents);
    }

    private void AddDocuments(RepeatedField<Proto.Document> documents, ByteString packed, int packedDimensions, int? chunkIndex)
    {
        if ((long)_ids.Count + documents.Count > _limits.MaxDocuments)
        {
            throw StatusErrors.ResourceExhausted(
                "documents",
                $"has more than {_limits.MaxDocuments} documents, the most this server groups in one batch "
                + "(TopicGroups:Limits:MaxDocuments); split the batch into smaller ones.");
        }

        if (_expectedFromChunk0 && _ids.Count + documents.Count > _expectedDocuments)
        {
            throw StatusErrors.InvalidArgument(
                DocumentCountField,
                $"is {_expectedDocuments} (chunk 0) but chunk {chunkIndex} brings the batch to {_ids.Count + documents.Count} documents; "
                + "set it to the number of documents of the whole batch, or leave it 0.");
        }

        if (packed.Length > 0 || packedDimensions != 0)
        {
            AddPackedDocuments(documents, packed, packedDimensions, chunkIndex);
            return;
        }

        if (_form == EmbeddingForm.Packed && documents.Count > 0)
        {
            AddViolation(
                PackedField,
                $"is empty on chunk {chunkIndex} but chunk {_formSource} sent packed embeddings; a batch sends its embeddings one way: "
                + "packed_embeddings (with embedding_dimensions) on every chunk that has documents, or Document.embedding on every document.");
            ThrowIfInvalid();
        }

        foreach (Proto.Document document in documents)
        {
            int index = AddIdAndText(document);
            CheckEmbedding(document.Embedding, index, chunkIndex, document.Text);
            if (_violations.Count >= MaxViolations)
            {
                ThrowIfInvalid();
            }
        }
    }

    /// <summary>
    /// One message's embeddings as float32 little-endian bytes: checks the form, the dimension and the byte length,
    /// copies them in one block, then checks every row (vectorised; exact messages only for bad rows).
    /// </summary>
    private void AddPackedDocuments(RepeatedField<Proto.Document> documents, ByteString packed, int dimensions, int? chunkIndex)
    {
        int first = _ids.Count;
        string where = chunkIndex is int chunk ? $" on chunk {chunk}" : string.Empty;
        foreach (Proto.Document document in documents)
        {
            int index = AddIdAndText(document);
            if (document.Embedding.Count > 0)
            {
                AddViolation(
                    PackedField,
                    $"is set{where} but documents[{index}].embedding also has {document.Embedding.Count} values; send each embedding "
                    + "one way: in packed_embeddings (leaving Document.embedding empty), or in Document.embedding without packed_embeddings.");
                break;
            }
        }

        if (_ids.Count < first + documents.Count)
        {
            ThrowIfInvalid();   // stopped at a mixed document: nothing more to learn from this message
        }

        if (_form == EmbeddingForm.PerDocument || _textsOnlySource >= 0)
        {
            string earlier = _textsOnlySource >= 0
                ? $"documents[{_textsOnlySource}] came without an embedding (for the server to embed its text)"
                : $"documents[{_dimensionsSource}].embedding came in Document.embedding";
            AddViolation(
                PackedField,
                $"is set{where} but {earlier}; a batch sends its embeddings one way: packed_embeddings on every chunk, or "
                + "Document.embedding on every document.");
            ThrowIfInvalid();
        }

        if (dimensions <= 0)
        {
            string hint = documents.Count > 0 && packed.Length % (sizeof(float) * documents.Count) == 0
                ? $" ({packed.Length} bytes for {documents.Count} documents would be {packed.Length / sizeof(float) / documents.Count})"
                : string.Empty;
            AddViolation(
                PackedDimensionsField,
                $"is {dimensions}{where} but packed_embeddings has {packed.Length} bytes; set it to the number of values in each "
                + $"document's embedding{hint}.");
            ThrowIfInvalid();
        }

        if (dimensions > _limits.MaxDimensions)
        {
            throw StatusErrors.ResourceExhausted(
                PackedDimensionsField,
                $"is {dimensions}; this server accepts embeddings of at most {_limits.MaxDimensions} dimensions "
                + "(TopicGroups:Limits:MaxDimensions). Use an embedding model with fewer dimensions.");
        }

        if (_dimensions != 0 && dimensions != _dimensions)
        {
            AddViolation(
                PackedDimensionsField,
                $"is {dimensions}{where} but documents[{_dimensionsSource}].embedding has {_dimensions} values; every embedding of a "
                + "batch must come from the same model and have the same number of values.");
            ThrowIfInvalid();
        }

        long expectedBytes = (long)documents.Count * dimensions * sizeof(float);
        if (packed.Length != expectedBytes)
        {
            AddViolation(
                PackedField,
                $"has {packed.Length} bytes{where}; {documents.Count} documents × {dimensions} values (embedding_dimensions) × 4 bytes = "
                + $"{expectedBytes} bytes expected: every document's embedding as float32 little-endian, row-major in the order of documents.");
            ThrowIfInvalid();
        }

        if (documents.Count == 0)
        {
            return;
        }

        if (_dimensions == 0)
        {
            _dimensions = dimensions;
            _dimensionsSource = first;
        }

        if (_form == EmbeddingForm.None)
        {
            _form = EmbeddingForm.Packed;
            _formSource = chunkIndex ?? 0;
        }

        CountEmbeddingValues((long)documents.Count * dimensions, _ids.Count - 1, chunkIndex);

        Span<float> rows = Intake().TakePacked(packed.Span);
        bool allFinite = EmbeddingIntake.AllFinite(rows);
        for (int r = 0; r < documents.Count; r++)
        {
            Span<float> row = rows.Slice(r * dimensions, dimensions);
            if (!allFinite || EmbeddingIntake.AllZero(row))
            {
                CheckValues(row, first + r);
                if (_violations.Count >= MaxViolations)
                {
                    ThrowIfInvalid();
                }
            }
        }
    }

    /// <summary>The intake, created at the first embedding (the dimension is known then).</summary>
    private EmbeddingIntake Intake()
    {
        if (_intake is null)
        {
            // Reserve the whole matrix only when the batch is known to fit; otherwise the running total hits the limit
            // and names the document that crossed it, as without a reservation.
            int expected = (long)_expectedDocuments * _dimensions <= _limits.MaxEmbeddingValues ? _expectedDocuments : 0;
            _intake = new EmbeddingIntake(_dimensions, expected, _pool);
        }

        return _intake;
    }

    private void CheckId(string id, int index)
    {
        if (id.Length == 0)
        {
            AddViolation(FieldOf(index, "id"), "is empty; give every document an id of 1-256 characters, unique within the batch.");
        }
        else if (id.Length > TopicGroupsLimitsDefaults.MaxIdLength)
        {
            AddViolation(
                FieldOf(index, "id"),
                $"has {id.Length} characters; an id may have at most {TopicGroupsLimitsDefaults.MaxIdLength}. "
                + "Use a shorter key and keep long names in the text.");
        }
        else if (!_indexById.TryAdd(id, index))
        {
            AddViolation(
                FieldOf(index, "id"),
                $"\"{id}\" is also the id of documents[{_indexById[id]}]; ids must be unique within a batch.");
        }
    }

    private void CheckText(string text, int index)
    {
        if (text.Length > _limits.MaxTextLength)
        {
            throw StatusErrors.ResourceExhausted(
                FieldOf(index, "text"),
                $"has {text.Length} characters; this server accepts texts of at most {_limits.MaxTextLength} "
                + "(TopicGroups:Limits:MaxTextLength). Send the part the embedding was made from.");
        }
    }

    private void CheckEmbedding(RepeatedField<float> embedding, int index, int? chunkIndex, string text)
    {
        int count = embedding.Count;
        if (count == 0)
        {
            CheckTextOnly(index, text);
            return;
        }

        if (_textsOnlySource >= 0)
        {
            AddViolation(
                FieldOf(index, "embedding"),
                $"has {count} values but documents[{_textsOnlySource}].embedding is empty; a batch is embedded by the caller or by "
                + $"the server, not both. Send an embedding with every document, or leave them out of every document and the server "
                + $"embeds the texts ({MiniLmEmbedder.ModelName}).");
            return;
        }

        if (count > _limits.MaxDimensions)
        {
            throw StatusErrors.ResourceExhausted(
                FieldOf(index, "embedding"),
                $"has {count} values; this server accepts embeddings of at most {_limits.MaxDimensions} dimensions "
                + "(TopicGroups:Limits:MaxDimensions). Use an embedding model with fewer dimensions.");
        }

        if (_dimensions == 0)
        {
            _dimensions = count;
            _dimensionsSource = index;
        }
        else if (count != _dimensions)
        {
            AddViolation(
                FieldOf(index, "embedding"),
                $"has {count} values but documents[{_dimensionsSource}].embedding has {_dimensions}; every embedding "
                + "of a batch must come from the same model and have the same number of values.");
            return;
        }

        if (_form == EmbeddingForm.None)
        {
            _form = EmbeddingForm.PerDocument;
            _formSource = chunkIndex ?? 0;
        }

        CountEmbeddingValues(count, index, chunkIndex);

        Span<float> row = Intake().Take(1);
        UnsafeCollectionOperations.AsSpan(embedding).CopyTo(row);
        if (!EmbeddingIntake.AllFinite(row) || EmbeddingIntake.AllZero(row))
        {
            CheckValues(row, index);
        }
    }

    /// <summary>A document without an embedding: fine when the whole batch is texts-only and the server embeds texts.</summary>
    private void CheckTextOnly(int index, string text)
    {
        if (_dimensions > 0)
        {
            AddViolation(
                FieldOf(index, "embedding"),
                $"is empty but documents[{_dimensionsSource}].embedding has {_dimensions} values; a batch is embedded by the caller or "
                + "by the server, not both. Send the embedding the text was made from, or leave the embeddings out of every document "
                + "and the server embeds the texts.");
            return;
        }

        if (_textsOnlySource < 0)
        {
            if (_embedding is not { Enabled: true })
            {
                throw StatusErrors.FailedPrecondition(
                    "TEXT_EMBEDDING_DISABLED",
                    $"{TextEmbeddingOptions.SectionName}:Enabled",
                    $"Documents came without embeddings (documents[{index}].embedding is empty) and this server does not embed texts: "
                    + $"{TextEmbeddingOptions.SectionName}:Enabled is false. Send an embedding with every document, or start the "
                    + $"server with --{TextEmbeddingOptions.SectionName}:Enabled=true (docs/embedding.md).");
            }

            _textsOnlySource = index;
        }

        if (string.IsNullOrWhiteSpace(text))
        {
            AddViolation(
                FieldOf(index, "text"),
                "is empty, and with no embedding the server embeds the text: send the document's text, or leave the document out.");
        }
    }

    /// <summary>The exact check behind a row the vectorised test did not vouch for: names the first bad value and its position.</summary>
    private void CheckValues(ReadOnlySpan<float> values, int index)
    {
        bool anyNonZero = false;
        for (int j = 0; j < values.Length; j++)
        {
            float value = values[j];
            if (!float.IsFinite(value))
            {
                string name = float.IsNaN(value) ? "NaN" : value > 0 ? "+Infinity" : "-Infinity";
                AddViolation(
                    FieldOf(index, "embedding"),
                    $"has {name} at position {j}; every value must be a finite number (check the embedding model's output).");
                return;
            }

            anyNonZero |= value != 0f;
        }

        if (!anyNonZero)
        {
            AddViolation(
                FieldOf(index, "embedding"),
                "is all zeros, so it has no direction to compare; send the document's real embedding or leave the document out.");
        }
    }

    /// <summary>"documents[i].part", built only when a violation needs it.</summary>
    private static string FieldOf(int index, string part) =>
        string.Create(CultureInfo.InvariantCulture, $"documents[{index}].{part}");

    private void CheckOptions(int documentCount)
    {
        if (_options is null)
        {
            AddViolation(
                "options",
                $"is missing; set at least options.group_count (1 to {Math.Max(documentCount, 1)}, the number of documents).");
            return;
        }

        int groups = _options.GroupCount;
        const string groupField = "options.group_count";
        if (groups < 0)
        {
            AddViolation(
                groupField,
                $"is {groups}; set it to the number of groups wanted, from 1 to {Math.Max(documentCount, 1)} (the number of documents), "
                + "or to 0 to let the server choose.");
        }
        else if (groups == 0)
        {
            CheckGroupCountRange(_options.GroupCountRange, documentCount);
        }
        else if (_options.GroupCountRange is not null)
        {
            AddViolation(
                "options.group_count_range",
                $"is set but group_count is {groups}; leave group_count 0 to let the server choose within the range, "
                + $"or unset the range to get exactly {groups} groups.");
        }
        else if (groups > _limits.MaxGroupCount)
        {
            AddViolation(
                groupField,
                $"is {groups}; this server forms at most {_limits.MaxGroupCount} groups per batch (TopicGroups:Limits:MaxGroupCount).");
        }
        else if (documentCount > 0 && groups > documentCount)
        {
            AddViolation(
                groupField,
                $"is {groups} but the batch has only {documentCount} documents; ask for at most {documentCount} groups.");
        }

        CheckCount("options.restart_count", _options.RestartCount, SphericalKMeansDefaults.RestartCount, _limits.MaxRestartCount, nameof(TopicGroupsLimits.MaxRestartCount));
        CheckCount("options.max_iterations", _options.MaxIterations, SphericalKMeansDefaults.MaxIterations, _limits.MaxIterations, nameof(TopicGroupsLimits.MaxIterations));
        CheckCount("options.term_count", _options.TermCount, GroupTermsDefaults.TermCount, _limits.MaxTermCount, nameof(TopicGroupsLimits.MaxTermCount));
        CheckCount("options.example_count", _options.ExampleCount, GroupingDefaults.ExampleCount, _limits.MaxExampleCount, nameof(TopicGroupsLimits.MaxExampleCount));
        CheckCount("options.silhouette_sample_size", _options.SilhouetteSampleSize, GroupCountSearchDefaults.SilhouetteSampleSize, _limits.MaxSilhouetteSampleSize, nameof(TopicGroupsLimits.MaxSilhouetteSampleSize));
        if (_options.SilhouetteSampleSize == 1)
        {
            AddViolation(
                "options.silhouette_sample_size",
                $"is 1; a silhouette sample needs at least 2 documents. Use 0 for the server default ({GroupCountSearchDefaults.SilhouetteSampleSize}).");
        }

        CheckCount("options.outlier_minimum_group_size", _options.OutlierMinimumGroupSize, GroupingDefaults.OutlierMinimumGroupSize, _limits.MaxDocuments, nameof(TopicGroupsLimits.MaxDocuments));
        double threshold = _options.OutlierThreshold;
        if (!double.IsFinite(threshold) || threshold < 0)
        {
            AddViolation(
                "options.outlier_threshold",
                $"is {threshold.ToString(System.Globalization.CultureInfo.InvariantCulture)}; use 0 for the server default "
                + $"({GroupingDefaults.OutlierScoreThreshold.ToString(System.Globalization.CultureInfo.InvariantCulture)}) or a positive number "
                + "(a modified z-score: higher flags fewer documents).");
        }
    }

    /// <summary>group_count 0: the server chooses, within the range when one is given (0 at an end = the default end).</summary>
    private void CheckGroupCountRange(Proto.GroupCountRange? range, int documentCount)
    {
        if (documentCount is > 0 and < 3)
        {
            AddViolation(
                "options.group_count",
                $"is 0, which asks the server to choose the number of groups; that needs at least 3 documents and the batch has "
                + $"{documentCount}. Set group_count from 1 to {documentCount}.");
            return;
        }

        if (range is null)
        {
            return;
        }

        const string minimumField = "options.group_count_range.minimum";
        const string maximumField = "options.group_count_range.maximum";
        int minimum = range.Minimum;
        int maximum = range.Maximum;
        int largest = documentCount - 1;
        string defaultMaximum = documentCount >= 3
            ? $" ({GroupCountSearchOptions.DefaultRange(documentCount).Maximum} for this batch)"
            : string.Empty;
        if (minimum is < 0 or 1)
        {
            AddViolation(
                minimumField,
                $"is {minimum}; use 0 for the default ({GroupCountSearchDefaults.DefaultMinimum}) or a count of at least 2: "
                + "a silhouette compares each group with its nearest neighbour.");
        }
        else if (documentCount > 0 && minimum > largest)
        {
            AddViolation(
                minimumField,
                $"is {minimum} but the batch has only {documentCount} documents; the silhouette needs at most {largest} groups "
                + "(one group must hold two documents).");
        }

        if (maximum is < 0 or 1)
        {
            AddViolation(
                maximumField,
                $"is {maximum}; use 0 for the default, min(40, ⌊√(documents / 2)⌋){defaultMaximum}, or a count of at least 2.");
        }
        else if (maximum > _limits.MaxGroupCount)
        {
            AddViolation(
                maximumField,
                $"is {maximum}; this server forms at most {_limits.MaxGroupCount} groups per batch (TopicGroups:Limits:MaxGroupCount).");
        }
        else if (documentCount > 0 && maximum > largest)
        {
            AddViolation(
                maximumField,
                $"is {maximum} but the batch has only {documentCount} documents; the silhouette needs at most {largest} groups "
                + "(one group must hold two documents).");
        }
        else if (maximum >= 2 && minimum >= 2 && maximum < minimum)
        {
            AddViolation(maximumField, $"is {maximum}, below minimum {minimum}; give a range with minimum ≤ maximum.");
        }
    }

    private void CheckCount(string field, int value, int serverDefault, int max, string limitName)
    {
        if (value < 0)
        {
            AddViolation(field, $"is {value}; use 0 for the server default ({serverDefault}) or a positive number up to {max}.");
        }
        else if (value > max)
        {
            AddViolation(
                field,
                $"is {value}; this server allows at most {max} (TopicGroups:Limits:{limitName}). Use 0 for the server default ({serverDefault}).");
        }
    }

    private void AddViolation(string field, string description)
    {
        if (_violations.Count < MaxViolations)
        {
            _violations.Add(new BadRequest.Types.FieldViolation { Field = field, Description = description });
        }
    }

    private void ThrowIfInvalid()
    {
        if (_violations.Count > 0)
        {
            throw StatusErrors.InvalidArgument(_violations);
        }
    }

    // The batch's running total against TopicGroups:Limits:MaxEmbeddingValues, for either embedding form.
    private void CountEmbeddingValues(long added, int lastDocumentIndex, int? chunkIndex)
    {
        _embeddingValues += added;
        if (_embeddingValues > _limits.MaxEmbeddingValues)
        {
            string reached = chunkIndex is int chunk ? $" (reached in chunk {chunk})" : string.Empty;
            throw StatusErrors.ResourceExhausted(
                "documents",
                $"hold more than {_limits.MaxEmbeddingValues} embedding values in total by documents[{lastDocumentIndex}]{reached}, "
                + $"{_limits.MaxEmbeddingValues * sizeof(float) / (1024 * 1024)} MiB as float32: the most this server holds "
                + "for one batch (TopicGroups:Limits:MaxEmbeddingValues). Split the batch into smaller ones.");
        }
    }

    // Records a document's id and text (in batch order) and checks both; returns its index in the whole batch.
    private int AddIdAndText(Proto.Document document)
    {
        int index = _ids.Count;
        _ids.Add(document.Id);
        _texts.Add(document.Text);
        CheckId(document.Id, index);
        CheckText(document.Text, index);
        return index;
    }
}
