// GPX 1.1 track.
using System.Globalization;
using System.Text;
using System.Xml;

namespace FusionService.History;

/// <summary>
/// GPX 1.1 (namespace http://www.topografix.com/GPX/1/1): <c>gpx version="1.1" creator="FusionService"</c> with
/// metadata (name, desc), then trk (name, type, trkseg...), one trkseg per continuous piece of track, trkpt with lat
/// and lon attributes and a time element; heading, speed, the 95 % ellipse and, for raw fixes, outcome, NIS, accuracy
/// and reset go into the trkpt's extensions in the namespace <see cref="ExtensionNamespace"/>. Element order follows
/// the GPX 1.1 schema (metadataType: name, desc; trkType: name, type, trkseg; wptType: time, extensions).
/// </summary>
internal sealed class GpxTrackWriter : TrackFormatWriter
{
    /// <summary>The GPX 1.1 namespace.</summary>
    public const string GpxNamespace = "http://www.topografix.com/GPX/1/1";

    /// <summary>Namespace of this service's trkpt extensions.</summary>
    public const string ExtensionNamespace = "urn:x-fusionservice:gpx-track:1";

    private const string Prefix = "fs";
    private readonly XmlWriter _xml;
    private int _segment = -1;

    public GpxTrackWriter(Stream buffer)
    {
        _xml = XmlWriter.Create(buffer, new XmlWriterSettings { Encoding = new UTF8Encoding(false), CloseOutput = false });
    }

    /// <inheritdoc />
    public override string ContentType => "application/gpx+xml; charset=utf-8";

    /// <summary>Longitude moved into [-180, 180), the range of the GPX longitudeType.</summary>
    public static double NormaliseLongitude(double lonDeg)
    {
        double lon = lonDeg;
        while (lon >= 180)
        {
            lon -= 360;
        }

        while (lon < -180)
        {
            lon += 360;
        }

        return lon;
    }

    /// <inheritdoc />
    public override void Begin(TrackHeader header)
    {
        _xml.WriteStartDocument();
        _xml.WriteStartElement("gpx", GpxNamespace);
        _xml.WriteAttributeString("version", "1.1");
        _xml.WriteAttributeString("creator", "FusionService");
        _xml.WriteAttributeString("xmlns", Prefix, null, ExtensionNamespace);
        _xml.WriteStartElement("metadata", GpxNamespace);
        _xml.WriteElementString("name", GpxNamespace, header.Vehicle + " " + header.Kind + " track " + HistoryTime.Format(header.FromUs) + " to " + HistoryTime.Format(header.ToUs));
        _xml.WriteElementString("desc", GpxNamespace, header.Caution);
        _xml.WriteEndElement();
        _xml.WriteStartElement("trk", GpxNamespace);
        _xml.WriteElementString("name", GpxNamespace, header.Vehicle);
        _xml.WriteElementString("type", GpxNamespace, header.Kind);
    }

    /// <inheritdoc />
    public override void Point(in TrackPoint p)
    {
        if (p.Segment != _segment)
        {
            if (_segment >= 0)
            {
                _xml.WriteEndElement();
            }

            _xml.WriteStartElement("trkseg", GpxNamespace);
            _segment = p.Segment;
        }

        _xml.WriteStartElement("trkpt", GpxNamespace);
        _xml.WriteAttributeString("lat", Decimal(p.LatDeg));
        _xml.WriteAttributeString("lon", Decimal(NormaliseLongitude(p.LonDeg)));
        _xml.WriteElementString("time", GpxNamespace, HistoryTime.Format(p.TimeUs));
        _xml.WriteStartElement("extensions", GpxNamespace);
        if (p.HeadingDeg is { } heading)
        {
            Extension("heading_deg", Number(heading));
        }

        if (p.SpeedMps is { } speed)
        {
            Extension("speed_mps", Number(speed));
        }

        Extension("ellipse95_semi_major_m", Number(p.SemiMajorM));
        Extension("ellipse95_semi_minor_m", Number(p.SemiMinorM));
        Extension("ellipse95_orientation_deg", Number(p.OrientationDeg));
        if (p.Outcome is { } outcome)
        {
            Extension("outcome", outcome);
        }

        if (p.Nis is { } nis)
        {
            Extension("nis", Number(nis));
        }

        if (p.AccuracyM is { } accuracy)
        {
            Extension("accuracy_m", Number(accuracy));
        }

        if (p.TrackReset is { } reset)
        {
            Extension("track_reset", reset ? "true" : "false");
        }

        _xml.WriteEndElement();
        _xml.WriteEndElement();
    }

    /// <inheritdoc />
    public override void End()
    {
        if (_segment < 0)
        {
            _xml.WriteStartElement("trkseg", GpxNamespace);
        }

        _xml.WriteEndElement();
        _xml.WriteEndElement();
        _xml.WriteEndElement();
        _xml.WriteEndDocument();
    }

    /// <inheritdoc />
    public override void Flush() => _xml.Flush();

    /// <summary>xsd:decimal text (no exponent), nine decimals (below a millimetre in degrees).</summary>
    private static string Decimal(double value) => value.ToString("0.#########", CultureInfo.InvariantCulture);

    private void Extension(string name, string value) => _xml.WriteElementString(Prefix, name, ExtensionNamespace, value);
}
