using System.Security.Cryptography;
using System.Security.Cryptography.X509Certificates;

namespace TopicGroups.Server.Security;

/// <summary>
/// TLS for the server's port, from configuration section "TopicGroups:Tls" (docs/operations.md, "Access"):
/// a PKCS#12 file (.pfx/.p12) with its password, or a PEM certificate with a PEM private key.
/// Without a certificate the server speaks cleartext HTTP/2 (fine on loopback or behind a TLS-terminating proxy).
/// </summary>
internal sealed class TlsOptions
{
    public const string SectionName = "TopicGroups:Tls";

    /// <summary>The certificate: a .pfx/.p12 file, or a PEM file (which may also hold the key).</summary>
    /// <value>The default is null: no TLS.</value>
    public string? CertificatePath { get; set; }

    /// <summary>The PKCS#12 file's password, or the password of an encrypted PEM key.</summary>
    /// <value>The default is null: no password.</value>
    public string? CertificatePassword { get; set; }

    /// <summary>The PEM private key, when it is not in the certificate file.</summary>
    /// <value>The default is null: the key is in CertificatePath.</value>
    public string? KeyPath { get; set; }

    public bool Enabled => !string.IsNullOrWhiteSpace(CertificatePath);

    /// <summary>Loads the certificate with its private key; throws naming the setting to fix (never the password).</summary>
    public X509Certificate2 LoadCertificate()
    {
        string path = CertificatePath ?? throw new InvalidOperationException($"{SectionName}:CertificatePath is not set.");
        if (!File.Exists(path))
        {
            throw new InvalidOperationException($"{SectionName}:CertificatePath names \"{path}\", which does not exist; point it at a .pfx/.p12 or PEM certificate file.");
        }

        if (KeyPath is not null && !File.Exists(KeyPath))
        {
            throw new InvalidOperationException($"{SectionName}:KeyPath names \"{KeyPath}\", which does not exist; point it at the PEM private key of the certificate.");
        }

        X509Certificate2 certificate;
        try
        {
            string extension = Path.GetExtension(path).ToLowerInvariant();
            if (extension is ".pfx" or ".p12")
            {
                certificate = X509CertificateLoader.LoadPkcs12FromFile(path, CertificatePassword);
            }
            else
            {
                certificate = string.IsNullOrEmpty(CertificatePassword)
                    ? X509Certificate2.CreateFromPemFile(path, KeyPath)
                    : X509Certificate2.CreateFromEncryptedPemFile(path, CertificatePassword, KeyPath);
            }
        }
        catch (CryptographicException exception)
        {
            throw new InvalidOperationException(
                $"{SectionName}: the certificate in \"{path}\" could not be loaded ({exception.Message}). Check {SectionName}:CertificatePassword "
                + $"for a .pfx/.p12 file, or {SectionName}:KeyPath for a PEM certificate whose key is in a separate file.",
                exception);
        }

        if (!certificate.HasPrivateKey)
        {
            certificate.Dispose();
            throw new InvalidOperationException(
                $"{SectionName}: the certificate in \"{path}\" has no private key; use a .pfx/.p12 that includes it, or set {SectionName}:KeyPath to the PEM key.");
        }

        return certificate;
    }
}
